"""Sweeps on a LocalCluster of 2 workers: every run recorded, a summary that the runs reproduce, resume."""

from pathlib import Path

import numpy as np

from circuitlab import api
from circuitlab.runs import RunHistory
from circuitlab.runs.sweep import plan_sweep, run_sweep

LATCH = Path(__file__).resolve().parents[1] / "example_circuits" / "set_reset_latch.circuit.json"


def test_sweep_of_two_settings_and_three_seeds_records_six_runs_and_resume_runs_nothing(tmp_path):
    history = RunHistory(tmp_path / "h.sqlite")
    plan = plan_sweep(api.load(LATCH), {"training.learning_rate": [0.05, 0.2]}, [0, 1, 2], epochs=30)
    result = run_sweep(plan, history, workers=2)
    runs = history.list_runs(sweep_id=result.sweep_id)
    assert len(runs) == 6 == history.count_runs() and result.ran == 6
    for row in result.summary:
        mine = [r for r in runs if r["setting"]["training.learning_rate"] == row["training.learning_rate"]]
        assert len(mine) == row["runs"] == 3
        # recomputed from the recorded runs (mean and sample standard deviation: common practice)
        best = [r["best_validation_loss"] for r in mine]
        assert np.isclose(row["best_validation_loss_mean"], np.mean(best))
        assert np.isclose(row["best_validation_loss_std"], np.std(best, ddof=1))
        assert row["reached_target_fraction"] == sum(r["outcome"] == "reached_target" for r in mine) / 3
    assert history.get_sweep(result.sweep_id)["summary"] == result.summary
    again = run_sweep(plan, history, workers=2, resume=True)
    assert again.ran == 0 and history.count_runs() == 6 and again.summary == result.summary
