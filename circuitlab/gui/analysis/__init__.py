"""The analysis panel and the weight-matrix view (Qt); the analyses themselves live in engine.analysis."""
