"""The editor: all Qt code of circuitlab lives in this package."""
