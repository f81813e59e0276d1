#!/usr/bin/env python3
"""Speed figures of biasbook, each measured side by side with its reference in one run.

Usage
-----
``python benchmarks/run.py``            readable table
``python benchmarks/run.py --json``     one JSON object (figures, goals, machine, notes)
``python benchmarks/run.py --quick``    small sizes, a smoke run of a few seconds
``python benchmarks/run.py --only exact_solve``   one benchmark (repeatable)

Every figure is a ratio or a time taken on this machine in this run, never
compared with a number from another run: other jobs share the cores, so
each time is the median of several repeats, and the two sides of a ratio
are timed in alternation so that a burst of load slows both alike.

Adding a benchmark
------------------
Write ``def name(sizes) -> dict`` and decorate it with :func:`benchmark`,
giving its goals (figure -> ``"<= 1.5"`` or ``">= 100"``) and a note on how
it is measured (formatted with the entries of :data:`SIZES`).  Numbers in
the returned dict become figures; booleans become entries of ``checks``.
"""

from __future__ import annotations

import argparse
import gc
import json
import math
import operator
import os
import platform
import statistics
import subprocess
import sys
import tempfile
import time
from dataclasses import dataclass

import numpy as np

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
TOPOLOGY = "divider_source"
POLARITY = "npn"

# Problem sizes and repeats; "quick" only shows that every benchmark runs.
SIZES = {
    "full": {
        "closed_form_points": 1_000_000, "closed_form_repeats": 7,
        "solve_points": 10_000, "solve_repeats": 5,
        "scipy_points": 500, "scipy_repeats": 3,
        "derive_repeats": 3,
        "mc_samples": 200_000, "mc_closed_form_samples": 5_000_000, "panel_changes": 20,
        "mc_memory_samples": 1_000_000, "mc_compare_samples": 50_000, "mc_compare_repeats": 3,
        "panel_points": 200, "notebooks": True, "review": True, "synthesis_all": True,
        "panel_browser_typed": 10, "panel_browser_slider": 10,
    },
    "quick": {
        "closed_form_points": 2_000, "closed_form_repeats": 2,
        "solve_points": 200, "solve_repeats": 2,
        "scipy_points": 10, "scipy_repeats": 1,
        "derive_repeats": 1,
        "mc_samples": 2_000, "mc_closed_form_samples": 20_000, "panel_changes": 3,
        "mc_memory_samples": 2_000, "mc_compare_samples": 500, "mc_compare_repeats": 1,
        "panel_points": 20, "notebooks": False, "review": False, "synthesis_all": False,
        "panel_browser_typed": 0, "panel_browser_slider": 0,  # no browser in a smoke run
    },
}

GOAL_OPERATORS = {"<=": operator.le, ">=": operator.ge}


# ---------------------------------------------------------------------------
# registry

@dataclass(frozen=True)
class Benchmark:
    """One registered benchmark: a function of the sizes returning figures."""

    name: str
    function: object
    goals: dict
    note: str


REGISTRY: dict[str, Benchmark] = {}


def benchmark(name, *, goals=None, note=""):
    """Register ``function(sizes) -> dict of figures`` under ``name``."""
    def register(function):
        for goal in (goals or {}).values():
            if goal.split()[0] not in GOAL_OPERATORS:
                raise ValueError(f"goal {goal!r} must start with <= or >=")
        REGISTRY[name] = Benchmark(name, function, dict(goals or {}), note)
        return function
    return register


def goal_met(goal, value):
    """Whether ``value`` meets a goal written ``"<= 1.5"`` or ``">= 100"``."""
    symbol, threshold = goal.split()
    return bool(GOAL_OPERATORS[symbol](value, float(threshold)))


# ---------------------------------------------------------------------------
# helpers

def median_times(functions, repeats):
    """Median wall time in s of each callable, the callables run in alternation.

    ``repeats`` is a count for all or a dict name -> count (a slow reference
    may be repeated less often than a fast one).  Each callable is called
    once first, untimed, so that first-call costs (imports, page faults,
    caches) are not counted; the garbage collector is off while a call is
    timed, as in :mod:`timeit`.
    """
    counts = repeats if isinstance(repeats, dict) else dict.fromkeys(functions, repeats)
    for function in functions.values():
        function()
    times = {name: [] for name in functions}
    for round_ in range(max(counts.values())):
        for name, function in functions.items():
            if round_ >= counts[name]:
                continue
            gc.collect()
            gc.disable()
            try:
                start = time.perf_counter()
                function()
                times[name].append(time.perf_counter() - start)
            finally:
                gc.enable()
    return {name: statistics.median(values) for name, values in times.items()}


def max_relative_difference(a, b):
    """Largest ``|a - b| / |b|`` over all points."""
    a, b = np.asarray(a, dtype=float), np.asarray(b, dtype=float)
    return float(np.max(np.abs(a - b) / np.abs(b)))


def compiled_model():
    """The kit's compiled divider_source model (from the disk cache if filled)."""
    from kit import topologies
    from kit.model.compiled import compile_model

    return compile_model(topologies.get(TOPOLOGY), POLARITY)


def random_designs(n, seed):
    """Parameters of ``n`` random NPN divider sources around the kit's default design.

    Our own scenario: resistors within ±20 %, supply within ±10 %, load
    5-10 V, beta 80-400, I_S 1e-15-1e-13 A, V_A 30-200 V, -40-125 °C and a
    small emitter-resistor TCR.  Every point stays forward active.
    """
    import kit

    nominal = kit.design(TOPOLOGY, POLARITY).parameters()
    rng = np.random.default_rng(seed)

    def spread(name, fraction):
        return nominal[name] * rng.uniform(1 - fraction, 1 + fraction, n)

    return nominal | {
        "r1": spread("r1", 0.2), "r2": spread("r2", 0.2), "r_e": spread("r_e", 0.2),
        "v_supply": spread("v_supply", 0.1), "v_load": rng.uniform(5.0, 10.0, n),
        "Q1.beta_f": rng.uniform(80.0, 400.0, n), "Q1.i_s": 10.0 ** rng.uniform(-15.0, -13.0, n),
        "Q1.v_a": rng.uniform(30.0, 200.0, n), "temp": rng.uniform(233.15, 398.15, n),
        "tcr_r_e": rng.uniform(-200e-6, 200e-6, n),
    }


# ---------------------------------------------------------------------------
# the same physics written out by hand, as a designer would without the kit

BOLTZMANN_OVER_CHARGE = 1.380649e-23 / 1.602176634e-19  # V/K, exact in the 2019 SI


def operating_by_hand(v):
    """Operating values at the point's temperature from the parameters ``v`` (arrays).

    Textbook temperature laws: ``V_T = kT/q``, ``I_S (T/T0)^m_IS exp(E_g/V_T (T/T0 - 1))``,
    ``beta_F (T/T0)^m_beta (1 + TC (T - T0))``, ``R (1 + TCR (T - T0))``.
    """
    t, t0 = v["temp"], v["t_ref"]
    ratio, rise = t / t0, t - t0
    v_t = BOLTZMANN_OVER_CHARGE * t
    return {
        "v_t": v_t, "v_cc": v["v_supply"], "v_out": v["v_load"],
        "r1": v["r1"] * (1 + v["tcr_r1"] * rise), "r2": v["r2"] * (1 + v["tcr_r2"] * rise),
        "r_e": v["r_e"] * (1 + v["tcr_r_e"] * rise),
        "i_s": v["Q1.i_s"] * ratio ** v["Q1.i_s_temp_exponent"] * np.exp(v["Q1.e_g"] / v_t * (ratio - 1)),
        "beta": v["Q1.beta_f"] * ratio ** v["Q1.beta_temp_exponent"] * (1 + v["Q1.beta_tc"] * rise),
        "beta_r": v["Q1.beta_r"], "v_a": v["Q1.v_a"],
    }


def exponential_by_hand(q):
    """``I = (V_T/K) ω(V_TH/V_T + ln(I_S K/V_T))``, ``K = (R_TH + (β+1) R_E)/β``, in NumPy."""
    from scipy.special import wrightomega

    r1, r2, v_t = q["R1"], q["R2"], q["V_T"]
    beta = q["beta_Q1"]
    v_th = q["V_CC"] * r2 / (r1 + r2)
    k = (r1 * r2 / (r1 + r2) + (beta + 1) * q["R_E"]) / beta
    return v_t / k * wrightomega(v_th / v_t + np.log(q["I_S_Q1"] * k / v_t))


def _exp(a):
    # Only a wild solver iterate gets near the clip (80 V_T is about 2 V).
    return math.exp(min(a, 80.0))


def kcl_by_hand(x, o):
    """KCL residuals (A, currents leaving) at base and emitter, and their Jacobian.

    Ebers–Moll transport model with a forward Early factor (Ebers & Moll,
    Proc. IRE 42, 1954): the same equations the kit derives, one point,
    plain floats.  ``o`` holds that point's operating values.
    """
    v_b, v_e = x
    v_t, i_s, beta, beta_r, v_a = o["v_t"], o["i_s"], o["beta"], o["beta_r"], o["v_a"]
    f = _exp((v_b - v_e) / v_t)  # forward junction
    r = _exp((v_b - o["v_out"]) / v_t)  # reverse junction
    early = 1 + (o["v_out"] - v_e) / v_a
    i_c = i_s * (f - r) * early - i_s / beta_r * (r - 1)
    i_b = i_s / beta * (f - 1) + i_s / beta_r * (r - 1)
    residuals = [(v_b - o["v_cc"]) / o["r1"] + v_b / o["r2"] + i_b, v_e / o["r_e"] - i_c - i_b]
    # derivatives of i_c and i_b over v_b and v_e
    df, dr = f / v_t, r / v_t
    dic_b = i_s * (df - dr) * early - i_s / beta_r * dr
    dic_e = -i_s * df * early - i_s * (f - r) / v_a
    dib_b = i_s / beta * df + i_s / beta_r * dr
    dib_e = -i_s / beta * df
    jacobian = [[1 / o["r1"] + 1 / o["r2"] + dib_b, dib_e],
                [-dic_b - dib_b, 1 / o["r_e"] - dic_e - dib_e]]
    return residuals, jacobian


def collector_current_by_hand(x, o):
    """Output current (the collector current of the NPN sink) at node voltages ``x``."""
    v_b, v_e = x
    f = _exp((v_b - v_e) / o["v_t"])
    r = _exp((v_b - o["v_out"]) / o["v_t"])
    return (o["i_s"] * (f - r) * (1 + (o["v_out"] - v_e) / o["v_a"])
            - o["i_s"] / o["beta_r"] * (r - 1))


# ---------------------------------------------------------------------------
# benchmarks

@benchmark(
    "closed_form",
    goals={"closed_form_vs_numpy": "<= 1.5"},
    note=("closed_form_vs_numpy: kit model.closed_forms(q)['exponential'] (that one call "
          "evaluates every closed form of the topology) over hand-written NumPy + "
          "scipy.special.wrightomega of the exponential form alone, on the same "
          "(M, {closed_form_points}) operating values of random designs; median of "
          "{closed_form_repeats} alternating repeats after one untimed call each."),
)
def closed_form(sizes):
    """The kit's compiled Wright-ω closed form against the same formula written in NumPy."""
    from kit.model.solve import parameter_array

    model = compiled_model()
    q = model.operating(parameter_array(model, random_designs(sizes["closed_form_points"], seed=1)))
    rows = {name: q[j] for name, j in model.operating_index.items()}
    times = median_times({"kit": lambda: model.closed_forms(q)["exponential"],
                          "numpy": lambda: exponential_by_hand(rows)},
                         sizes["closed_form_repeats"])
    return {
        "closed_form_vs_numpy": times["kit"] / times["numpy"],
        "closed_form_kit_s": times["kit"],
        "closed_form_numpy_s": times["numpy"],
        "closed_form_max_rel_diff": max_relative_difference(model.closed_forms(q)["exponential"],
                                                            exponential_by_hand(rows)),
    }


def residuals_by_hand(x, o):
    """The KCL residuals alone (SciPy then differences them for its Jacobian)."""
    return kcl_by_hand(x, o)[0]


@benchmark(
    "exact_solve",
    goals={"exact_solve_vectorised_speedup": ">= 100"},
    note=("exact_solve_vectorised_speedup: a per-point loop of scipy.optimize.root(method='hybr', "
          "xtol=1e-12, the kit's step tolerance) on hand-written KCL, timed on the first "
          "{scipy_points} of {solve_points} random designs and scaled per point to all "
          "{solve_points}, over kit.model.solve.solve_points on all {solve_points} at once. Plain hybr "
          "(Jacobian by differences) is the headline; *_analytic_jacobian passes the hand-written "
          "Jacobian instead. SciPy starts from the kit's declared starting voltages and gets its operating "
          "values precomputed (both untimed, which favours SciPy); the kit's time includes its own. "
          "Medians of {solve_repeats} (kit) and {scipy_repeats} (each SciPy loop) alternating "
          "repeats after one untimed call each."),
)
def exact_solve(sizes):
    """Vectorised damped Newton of the kit against per-point SciPy root loops."""
    from scipy.optimize import root

    from kit.model.solve import parameter_array, solve_points

    model = compiled_model()
    n, m = sizes["solve_points"], sizes["scipy_points"]
    values = random_designs(n, seed=2)
    points = solve_points(model, values)
    # The kit's declared starting voltages (the divider declares every node's).
    x0 = model.starts(model.operating(parameter_array(model, values)))[:, :m].T
    by_hand = operating_by_hand(values)
    operating = [{key: float(np.broadcast_to(a, (n,))[k]) for key, a in by_hand.items()}
                 for k in range(m)]
    options = {"xtol": 1e-12}

    def scipy_loop():
        return [root(residuals_by_hand, x0[k], args=(operating[k],), method="hybr",
                     options=options) for k in range(m)]

    def scipy_loop_jacobian():
        return [root(kcl_by_hand, x0[k], args=(operating[k],), jac=True, method="hybr",
                     options=options) for k in range(m)]

    def kit_solve():
        return solve_points(model, values)

    times = median_times(
        {"kit": kit_solve, "scipy": scipy_loop, "jacobian": scipy_loop_jacobian},
        {"kit": sizes["solve_repeats"], "scipy": sizes["scipy_repeats"],
         "jacobian": sizes["scipy_repeats"]})
    kit_s = times["kit"]
    per_point = {name: times[name] / m for name in ("scipy", "jacobian")}

    solutions = scipy_loop() + scipy_loop_jacobian()
    i_scipy = [collector_current_by_hand(s.x, operating[k % m]) for k, s in enumerate(solutions)]
    return {
        "exact_solve_vectorised_speedup": per_point["scipy"] * n / kit_s,
        "exact_solve_speedup_analytic_jacobian": per_point["jacobian"] * n / kit_s,
        "exact_solve_kit_s": kit_s,
        "exact_solve_scipy_per_point_s": per_point["scipy"],
        "exact_solve_scipy_scaled_s": per_point["scipy"] * n,
        "exact_solve_scipy_analytic_jacobian_per_point_s": per_point["jacobian"],
        "exact_solve_max_rel_diff": max_relative_difference(np.tile(points.i_out[:m], 2), i_scipy),
        "exact_solve_kit_mean_iterations": float(points.iterations.mean()),
        "exact_solve_points": n,
        "exact_solve_scipy_timed_points": m,
        "exact_solve_kit_all_converged": bool(points.converged.all()),
        "exact_solve_scipy_all_succeeded": all(s.success for s in solutions),
    }


# Runs in a fresh interpreter: the time around compile_model alone, imports apart.
# With a first argument "preimport", NumPy and the SciPy modules the kit uses
# are imported before the clock starts, as in a notebook that already used them.
DERIVE_CHILD = f"""
import json, sys, time
if sys.argv[1:] == ["preimport"]:
    import numpy, scipy.constants, scipy.special
from kit import topologies
from kit.model.compiled import compile_model
topology = topologies.get({TOPOLOGY!r})
start = time.perf_counter()
compile_model(topology, {POLARITY!r})
done = time.perf_counter()
print(json.dumps({{"compile_s": done - start, "sympy_loaded": "sympy" in sys.modules}}))
"""


def _derive_in_subprocess(cache, *arguments):
    """``(compile_s, process_s, sympy_loaded)`` of one fresh interpreter using ``cache``."""
    env = dict(os.environ, BIASBOOK_CACHE=str(cache))
    env.pop("PYTHONDONTWRITEBYTECODE", None)  # measure the usual setting: bytecode is cached
    start = time.perf_counter()
    result = subprocess.run([sys.executable, "-c", DERIVE_CHILD, *arguments], env=env,
                            capture_output=True, text=True, check=True)
    process_s = time.perf_counter() - start
    child = json.loads(result.stdout.strip().splitlines()[-1])
    return child["compile_s"], process_s, child["sympy_loaded"]


@benchmark(
    "derive",
    goals={"derive_warm_s": "<= 0.5"},
    note=("derive_cold_s / derive_warm_s: time around compile_model('{topology}', '{polarity}') in a "
          "fresh interpreter (after importing kit.model.compiled and kit.topologies) with BIASBOOK_CACHE at "
          "a new empty directory (cold), then in a second fresh interpreter on the filled cache "
          "(warm); derive_warm_preimported_s: warm again in a third interpreter that imported "
          "numpy, scipy.constants and scipy.special before the clock started; *_process_s: the "
          "parent's wall time of that whole subprocess, interpreter start and imports included; "
          "medians of {derive_repeats} cold/warm runs."),
)
def derive(sizes):
    """Cold (SymPy derivation and code generation) and warm (disk cache) model compiles."""
    runs = {"cold": [], "warm": [], "preimported": []}
    for _ in range(sizes["derive_repeats"]):
        with tempfile.TemporaryDirectory(prefix="biasbook-bench-") as cache:
            runs["cold"].append(_derive_in_subprocess(cache))
            runs["warm"].append(_derive_in_subprocess(cache))
            runs["preimported"].append(_derive_in_subprocess(cache, "preimport"))

    def median(kind, index):
        return statistics.median(r[index] for r in runs[kind])

    return {
        "derive_cold_s": median("cold", 0),
        "derive_cold_process_s": median("cold", 1),
        "derive_warm_s": median("warm", 0),
        "derive_warm_process_s": median("warm", 1),
        "derive_warm_preimported_s": median("preimported", 0),
        "derive_warm_without_sympy": not any(r[2] for r in runs["warm"] + runs["preimported"]),
    }


# ---------------------------------------------------------------------------
# running and reporting

def machine():
    """What the figures were measured on."""
    import scipy
    import sympy

    try:
        usable = len(os.sched_getaffinity(0))
    except AttributeError:
        usable = os.cpu_count()
    info = {
        "python": platform.python_version(),
        "implementation": platform.python_implementation(),
        "platform": platform.platform(),
        "numpy": np.__version__,
        "scipy": scipy.__version__,
        "sympy": sympy.__version__,
        "cpu_count": os.cpu_count(),
        "cpus_usable": usable,
    }
    if hasattr(os, "getloadavg"):
        info["load_average_1min_at_start"] = os.getloadavg()[0]  # other jobs make figures noisy
    return info


def run(names, mode):
    """Run the named benchmarks; return the report as a dict."""
    import kit

    sizes = SIZES[mode]
    report = {"figures": {}, "checks": {}, "goals": {}, "notes": {}}
    started = time.perf_counter()
    for name in names:
        bench = REGISTRY[name]
        for key, value in bench.function(sizes).items():
            report["checks" if isinstance(value, bool) else "figures"][key] = value
        for key, goal in bench.goals.items():
            if key not in report["figures"]:  # not measured in this mode (see the note)
                report["goals"][key] = {"goal": goal, "value": None, "met": None}
                continue
            value = report["figures"][key]
            report["goals"][key] = {"goal": goal, "value": value, "met": goal_met(goal, value)}
        report["notes"][name] = bench.note.format(topology=TOPOLOGY, polarity=POLARITY, **sizes)
    report["notes"]["all"] = (f"mode {mode!r}; times are wall-clock (time.perf_counter) medians; "
                              "ratios are taken between figures of this same run.")
    report["figures"]["benchmark_run_s"] = time.perf_counter() - started
    report["machine"] = machine() | {"biasbook": kit.__version__}
    report["mode"] = mode
    return report


def flat_json(report):
    """The JSON object: figures at the top level beside goals, checks, machine and notes."""
    return report["figures"] | {k: v for k, v in report.items() if k != "figures"}


def table(report):
    """The report as readable text."""
    lines = [f"biasbook benchmarks ({report['mode']}), python {report['machine']['python']}, "
             f"numpy {report['machine']['numpy']}, {report['machine']['cpus_usable']} cpus", ""]
    width = max(len(k) for k in report["figures"]) + 2
    for key, value in report["figures"].items():
        goal = report["goals"].get(key)
        verdict = f"   goal {goal['goal']}: {'met' if goal['met'] else 'MISSED'}" if goal else ""
        unit = " s" if key.endswith("_s") else ""
        lines.append(f"{key:<{width}}{value:>12.4g}{unit:<2}{verdict}")
    lines.append("")
    for key, value in report["checks"].items():
        lines.append(f"{key:<{width}}{'yes' if value else 'NO':>12}")
    lines.append("")
    for name, note in report["notes"].items():
        lines.append(f"[{name}] {note}")
    return "\n".join(lines)


@benchmark(
    "monte_carlo",
    goals={"monte_carlo_exact_samples_per_s": ">= 2e5", "monte_carlo_closed_form_samples_per_s": ">= 5e6"},
    note="{mc_samples} Monte Carlo samples of the divider source (resistors ±1 % uniform, β_F 100…300 "
         "log-uniform) through the vectorised exact solve, and {mc_closed_form_samples} through the compiled "
         "Wright-ω closed form; one core; medians of 3 alternating repeats",
)
def monte_carlo(sizes):
    """Samples per second of the exact solve and of the closed form, same draws."""
    from kit.model.solve import parameter_array, solve_points

    model = compiled_model()
    rng = np.random.default_rng(11)

    def draws(n):
        values = dict(random_designs(1, seed=3))
        values = {k: float(np.asarray(v).ravel()[0]) for k, v in values.items()}
        for name in ("r1", "r2", "r_e"):
            values[name] = values[name] * rng.uniform(0.99, 1.01, n)
        values["Q1.beta_f"] = np.exp(rng.uniform(np.log(100.0), np.log(300.0), n))
        return values

    exact_values = draws(sizes["mc_samples"])
    closed_q = model.operating(parameter_array(model, draws(sizes["mc_closed_form_samples"])))
    times = median_times({"exact": lambda: solve_points(model, exact_values),
                          "closed": lambda: model.closed_forms(closed_q)["exponential"]}, 3)
    converged = bool(solve_points(model, exact_values).converged.all())
    return {"monte_carlo_exact_samples_per_s": sizes["mc_samples"] / times["exact"],
            "monte_carlo_closed_form_samples_per_s": sizes["mc_closed_form_samples"] / times["closed"],
            "monte_carlo_exact_all_converged": converged}


# Runs in a fresh interpreter: the Monte Carlo of worst_case on the example record
# spec-bridge-excitation-fails.toml (12 condition points, self-heating on) with
# argv[1] samples; argv[2] > 0 sets the points solved per chunk (the whole run
# in one chunk is how the analysis worked before it streamed).  Reports its
# peak resident size, the size before the run and the run's time.
MC_MEMORY_CHILD = """
import dataclasses, json, resource, sys, time
from kit.analysis import worstcase
from kit.record import load_record
samples, chunk_points = int(sys.argv[1]), int(sys.argv[2])
if chunk_points:
    worstcase.MONTE_CARLO_CHUNK_POINTS = chunk_points
record = load_record(sys.argv[3])
spec = dataclasses.replace(record.spec, samples=samples)
worstcase.worst_case(record.design, dataclasses.replace(spec, samples=10), methods=("Monte Carlo",))  # compile
def peak_bytes():
    # Linux: this process's own high-water mark (VmHWM).  Its ru_maxrss starts from the parent's
    # peak at fork and keeps it across exec, so a big parent would be reported instead.
    try:
        with open("/proc/self/status") as status:
            return next(int(line.split()[1]) * 1024 for line in status if line.startswith("VmHWM:"))
    except (OSError, StopIteration):
        unit = 1 if sys.platform == "darwin" else 1024  # ru_maxrss: bytes on macOS, KiB on Linux
        return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * unit
before = peak_bytes()
start = time.perf_counter()
mc = worstcase.worst_case(record.design, spec, methods=("Monte Carlo",)).methods["Monte Carlo"]
seconds = time.perf_counter() - start
print(json.dumps({"peak_bytes": peak_bytes(),
                  "before_bytes": before, "seconds": seconds, "samples": mc.detail["samples"],
                  "condition_points": mc.detail["condition_points"]}))
"""
MC_MEMORY_RECORD = os.path.join(ROOT, "examples", "spec-bridge-excitation-fails.toml")


def _monte_carlo_child(samples, chunk_points=0):
    """The child's report (see MC_MEMORY_CHILD) as a dict."""
    result = subprocess.run([sys.executable, "-c", MC_MEMORY_CHILD, str(samples), str(chunk_points),
                             MC_MEMORY_RECORD], capture_output=True, text=True, check=True, cwd=ROOT)
    return json.loads(result.stdout.strip().splitlines()[-1])


@benchmark(
    "monte_carlo_memory",
    goals={"monte_carlo_peak_rss_mb": "<= 1000", "monte_carlo_streamed_vs_one_chunk_time": "<= 1.1"},
    note="worst_case Monte Carlo of examples/spec-bridge-excitation-fails.toml (12 condition points, "
         "self-heating on), each run in a fresh interpreter: monte_carlo_peak_rss_mb is the peak resident "
         "size (VmHWM on Linux, else ru_maxrss) of a run of {mc_memory_samples} samples, monte_carlo_run_rss_growth_mb what that "
         "run added to the interpreter (warmed up, model compiled), monte_carlo_worst_case_samples_per_s its "
         "rate (each sample solved at 12 points); side by side at {mc_compare_samples} samples, the same run "
         "with all points solved in one chunk (how it worked before streaming) and streamed: peak sizes "
         "and the ratio of the times, medians of {mc_compare_repeats} alternating runs",
)
def monte_carlo_memory(sizes):
    """Peak memory of a large Monte Carlo, and streamed against one chunk at a size both can do."""
    big = _monte_carlo_child(sizes["mc_memory_samples"])
    whole_run = sizes["mc_compare_samples"] * big["condition_points"]
    runs = {"streamed": [], "one_chunk": []}
    for _ in range(sizes["mc_compare_repeats"]):
        runs["streamed"].append(_monte_carlo_child(sizes["mc_compare_samples"]))
        runs["one_chunk"].append(_monte_carlo_child(sizes["mc_compare_samples"], chunk_points=whole_run))

    def median(kind, key):
        return statistics.median(run[key] for run in runs[kind])

    mb = 1e-6
    return {
        "monte_carlo_peak_rss_mb": big["peak_bytes"] * mb,
        "monte_carlo_run_rss_growth_mb": max(big["peak_bytes"] - big["before_bytes"], 0) * mb,
        "monte_carlo_worst_case_samples_per_s": big["samples"] / big["seconds"],
        "monte_carlo_memory_samples": big["samples"],
        "monte_carlo_condition_points": big["condition_points"],
        "monte_carlo_streamed_peak_rss_mb": median("streamed", "peak_bytes") * mb,
        "monte_carlo_one_chunk_peak_rss_mb": median("one_chunk", "peak_bytes") * mb,
        "monte_carlo_streamed_vs_one_chunk_time": median("streamed", "seconds") / median("one_chunk", "seconds"),
    }


@benchmark(
    "synthesis",
    goals={"synthesis_s": "<= 5"},
    note="synthesize() for the divider source, NPN only: 1 mA ± 10 %, load 3…8 V, 0…70 °C, β_F 100…300, "
         "1 % resistors (E96); sizing, screening of the candidates at the corners the exact sensitivities "
         "point to, extreme-value confirmation with self-heating; one run after a warm-up",
)
def synthesis(sizes):
    """Time of one synthesis for one topology and spec."""
    from kit.analysis.spec import Spec
    from kit.analysis.synthesis import synthesize

    spec = Spec(1e-3, 0.10, v_load=(3.0, 8.0), temp=(273.15, 343.15), beta={"npn": (100.0, 300.0)},
                resistor_tolerance=0.01)
    run = lambda: synthesize(spec, topologies=[TOPOLOGY], polarities=[POLARITY])  # noqa: E731
    found = run()  # warm-up: compiles and caches the model
    start = time.perf_counter()
    run()
    return {"synthesis_s": time.perf_counter() - start, "synthesis_found_a_design": found.best is not None}


@benchmark(
    "synthesis_all",
    goals={"synthesis_all_s": "<= 20"},
    note="`biasbook synthesize --all` on examples/spec-bridge-excitation-fails.toml in a fresh process "
         "(every topology of the record's sense, starting from the record): wall time of the second of "
         "two runs (the first warms the derivation cache); skipped in quick mode",
)
def synthesis_all(sizes):
    if not sizes["synthesis_all"]:
        return {}
    command = [sys.executable, "-m", "kit.cli", "synthesize", "--all", "--json",
               os.path.join(ROOT, "examples", "spec-bridge-excitation-fails.toml")]
    _timed_subprocess(command)
    seconds, code = _timed_subprocess(command)
    # exit 0: a design was found, 1: none meets the spec; both are a finished run
    return {"synthesis_all_s": seconds, "synthesis_all_finished": code in (0, 1)}


@benchmark(
    "panel_update",
    goals={"panel_update_ms": "<= 20"},
    note="kernel side: a typed resistor value (r1, a new E24 value each time) until the open plot (load) and "
         "the headline of a DesignPanel (divider source) hold the new design and the widgets have sent it (a "
         "plot in a closed tab is made when opened); median wall time of {panel_changes} changes, "
         "{panel_points} points per curve; phases from the panel's own timings; panel_update_cpu_ms is the "
         "kernel's processor time (less sensitive to other jobs on the cores); panel_update_all_views_ms: "
         "the change with all five plots made, as if every tab were open",
)
def panel_update(sizes):
    from kit.panels.timing import measure_update

    return measure_update(changes=sizes["panel_changes"], points=sizes["panel_points"])


@benchmark(
    "panel_load_step",
    goals={"panel_load_step_ms": "<= 20"},
    note="kernel side: the load-voltage slider stepped across compliance ({panel_changes} steps) on a "
         "DesignPanel (divider source), compliance edges reused; median ms, {panel_points} points per curve",
)
def panel_load_step(sizes):
    from kit.panels.timing import measure_update

    steps = measure_update(changes=sizes["panel_changes"], points=sizes["panel_points"], value="v_load")
    return {"panel_load_step_ms": steps["panel_update_ms"],
            "panel_load_step_evaluate_ms": 1e3 * steps["panel_update_evaluate_s"]}


@benchmark(
    "panel_browser",
    goals={"panel_browser_update_ms": "<= 150"},
    note="browser side: JupyterLab with a DesignPanel (divider source) in Chromium (Playwright, system "
         "browser); {panel_browser_typed} typed r_e values and {panel_browser_slider} load-slider steps, each "
         "timed in the page from the key press to the first frame painted after the last update it caused "
         "(Bokeh documents, the panel's nodes and inputs); median over all changes, by kind, and the slowest; "
         "panel_browser_tab_ms: a closed view opened until it shows the present design; full mode only",
)
def panel_browser(sizes):
    if not sizes["panel_browser_typed"]:
        return {}
    import panel_browser as browser  # benchmarks/ is this script's folder

    return browser.measure(typed=sizes["panel_browser_typed"], slider_steps=sizes["panel_browser_slider"])


def _timed_subprocess(command, env=None):
    start = time.perf_counter()
    result = subprocess.run(command, capture_output=True, text=True, env=env, cwd=ROOT)
    return time.perf_counter() - start, result.returncode



@benchmark(
    "notebooks_and_review",
    goals={"notebook_suite_s": "<= 180"},
    note="notebook_suite_s: pytest --nbval-lax on notebooks/ in a fresh process; wall time of one run "
         "(skipped in quick mode; the review's own figures are the review_pdf entry)",
)
def notebooks_and_review(sizes):
    if not sizes["notebooks"]:
        return {}
    env = dict(os.environ, BOKEH_RESOURCES="inline")
    suite, code = _timed_subprocess([sys.executable, "-m", "pytest", "-q", "-p", "no:cacheprovider",
                                     "--nbval-lax", "notebooks"], env)
    return {"notebook_suite_s": suite, "notebook_suite_passed": code == 0}


REVIEWED = {"review_s": os.path.join("notebooks", "tour.ipynb"),
            "review_record_s": os.path.join("examples", "wilson_mirror-strain-bridge-excitation.toml")}


@benchmark(
    "review_pdf",
    goals={"review_s": "<= 15", "review_record_s": "<= 15"},
    note="biasbook review to PDF in a fresh process (execute, convert, print with Chromium), wall time of "
         "one run: review_s the tour notebook, review_record_s a Wilson-mirror record through the template "
         "(skipped in quick mode)",
)
def review_pdf(sizes):
    if not sizes["review"]:
        return {}
    out = {}
    env = dict(os.environ, BOKEH_RESOURCES="inline")
    with tempfile.TemporaryDirectory() as scratch:
        for name, source in REVIEWED.items():
            seconds, code = _timed_subprocess([sys.executable, "-m", "kit.cli", "review", os.path.join(ROOT, source),
                                               "-o", os.path.join(scratch, name + ".pdf")], env)
            out |= {name: seconds, name[:-len("_s")] + "_succeeded": code == 0}
    return out


def main(argv=None):
    parser = argparse.ArgumentParser(description="Speed figures of biasbook, measured side by side.")
    parser.add_argument("--json", action="store_true", help="print one JSON object")
    parser.add_argument("--quick", action="store_true", help="small sizes (smoke run)")
    parser.add_argument("--only", action="append", choices=sorted(REGISTRY),
                        help="run only this benchmark (repeatable)")
    args = parser.parse_args(argv)
    report = run(args.only or list(REGISTRY), "quick" if args.quick else "full")
    print(json.dumps(flat_json(report), indent=2) if args.json else table(report))
    return 0


if __name__ == "__main__":
    sys.exit(main())
