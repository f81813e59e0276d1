"""Smoke test of benchmarks/run.py: it runs and reports every figure.

Only the shape of the report is checked, never a time or a ratio against its
goal: timings belong to the benchmark run itself (see benchmarks/README.md).
"""

from __future__ import annotations

import json
import math
import os
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]

FIGURES = (
    "closed_form_vs_numpy", "closed_form_kit_s", "closed_form_numpy_s",
    "exact_solve_vectorised_speedup", "exact_solve_speedup_analytic_jacobian", "exact_solve_kit_s",
    "exact_solve_scipy_per_point_s", "exact_solve_scipy_scaled_s",
    "exact_solve_scipy_analytic_jacobian_per_point_s", "exact_solve_kit_mean_iterations",
    "exact_solve_points", "exact_solve_scipy_timed_points",
    "derive_cold_s", "derive_cold_process_s", "derive_warm_s", "derive_warm_process_s",
    "derive_warm_preimported_s", "benchmark_run_s",
    "monte_carlo_exact_samples_per_s", "monte_carlo_closed_form_samples_per_s", "synthesis_s",
    "panel_update_s", "panel_update_ms", "panel_update_cpu_ms", "panel_update_evaluate_s",
    "monte_carlo_peak_rss_mb", "monte_carlo_worst_case_samples_per_s",
    "monte_carlo_memory_samples", "monte_carlo_condition_points", "monte_carlo_streamed_peak_rss_mb",
    "monte_carlo_one_chunk_peak_rss_mb", "monte_carlo_streamed_vs_one_chunk_time",
)
# Agreement between the kit and the hand-written reference: may be exactly 0.
DIFFERENCES = ("closed_form_max_rel_diff", "exact_solve_max_rel_diff")
# Growth of a process's peak size: 0 when a small run fits in memory already taken.
GROWTHS = ("monte_carlo_run_rss_growth_mb",)
GOALS = ("closed_form_vs_numpy", "exact_solve_vectorised_speedup", "derive_warm_s")
CHECKS = ("exact_solve_kit_all_converged", "exact_solve_scipy_all_succeeded",
          "derive_warm_without_sympy")


@pytest.fixture(scope="module")
def report(tmp_path_factory):
    env = dict(os.environ, BIASBOOK_CACHE=str(tmp_path_factory.mktemp("cache")))
    result = subprocess.run([sys.executable, str(ROOT / "benchmarks" / "run.py"), "--quick", "--json"],
                            cwd=ROOT, env=env, capture_output=True, text=True, timeout=300)
    assert result.returncode == 0, result.stderr
    return json.loads(result.stdout)


def _is_number(value):
    return isinstance(value, (int, float)) and not isinstance(value, bool) and math.isfinite(value)


@pytest.mark.slow
def test_every_figure_is_a_finite_positive_number(report):
    for key in FIGURES:
        assert _is_number(report.get(key)) and report[key] > 0, (key, report.get(key))
    for key in DIFFERENCES + GROWTHS:
        assert _is_number(report.get(key)) and report[key] >= 0, (key, report.get(key))


@pytest.mark.slow
def test_goals_checks_machine_and_notes_are_reported(report):
    for key in GOALS:
        goal = report["goals"][key]
        assert goal["goal"].split()[0] in ("<=", ">=")
        assert isinstance(goal["met"], bool)
        assert goal["value"] == report[key]
    for key in CHECKS:
        assert isinstance(report["checks"][key], bool)
    assert {"python", "numpy", "cpu_count"} <= set(report["machine"])
    assert {"closed_form", "exact_solve", "derive"} <= set(report["notes"])
    assert report["mode"] == "quick"


@pytest.mark.slow
def test_hand_written_references_agree_with_the_kit(report):
    # Loose bounds: a wrong equation shows up as an O(1) difference.
    assert report["closed_form_max_rel_diff"] < 1e-9
    assert report["exact_solve_max_rel_diff"] < 1e-6
    assert report["checks"]["exact_solve_kit_all_converged"]


@pytest.mark.slow
def test_browser_latency_is_a_goal_measured_only_in_the_full_run(report):
    # The quick run starts no JupyterLab and no browser: the goal is listed, its value left open.
    assert report["goals"]["panel_browser_update_ms"] == {"goal": "<= 150", "value": None, "met": None}
    assert not any(key.startswith("panel_browser") for key in report)
    assert "full mode only" in report["notes"]["panel_browser"]
    # Its kernel-side companion is measured in every run, beside it in the same JSON.
    assert report["goals"]["panel_update_ms"]["value"] == report["panel_update_ms"]
