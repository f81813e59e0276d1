"""How long a panel takes to show a change, kernel side (for ``benchmarks/run.py``).

One change = a value typed into the panel until every plot source, the
headline numbers, the drawing and the ledger hold the new design's data and
the widgets have sent what the browser shows; the browser's redraw is not
counted (``benchmarks/panel_browser.py`` times that).  Each change uses a different standard value, so no cache helps.
"""

from __future__ import annotations

import gc
import statistics
import time

import numpy as np

PHASES = ("evaluate", "sweeps", "views", "widgets")
# Changes made, not timed, before the timed ones: a kernel the designer has been typing into
# (the first changes of a fresh process pay for first-time allocations, up to half again).
WARMUP = 5


def measure_update(topology="divider_source", polarity="npn", changes=20, points=200, series="E24", value=None,
                   warmup=WARMUP):
    """Median seconds of ``changes`` panel updates, in total and by phase.

    The value changed is the topology's first resistor, stepped through its
    standard values around the default (a new design each time); with
    ``value="v_load"`` the load voltage, stepped across compliance as its
    slider does (the compliance edges are then reused).  ``warmup`` other
    values are applied first, untimed.  Phases:
    ``evaluate`` (:func:`kit.evaluate` and its headline), ``sweeps`` (the open
    plot's columns), ``widgets`` (sources, axis texts and input widgets
    updated in place and sent), ``views`` (schematic and ledger HTML when
    their tab is open, made after the numbers and plots went out; counted in
    the total all the same).

    Returns
    -------
    dict
        ``panel_update_s`` (and in ms ``panel_update_ms``) and
        ``panel_update_<phase>_s`` (medians of wall time),
        ``panel_update_cpu_ms`` (median processor time of the kernel process:
        what the change costs when other jobs share the cores),
        ``panel_update_all_views_ms`` (median of the change and then every
        closed plot made and filled as well),
        ``panel_update_over_evaluate`` (median of total / evaluate per change),
        ``panel_updates`` (changes applied) and ``panel_points`` (points per curve).

    Examples
    --------
    >>> figures = measure_update(changes=2, points=20)
    >>> figures["panel_updates"], figures["panel_update_s"] > 0
    (2, True)
    """
    import kit
    from kit.analysis.eseries import neighbours
    from kit.panels.curves import Settings
    from kit.panels.design import DesignPanel

    design = kit.design(topology, polarity)
    panel = DesignPanel(design, settings=Settings(points=points))
    if value == "v_load":
        name = "v_load"
        low, high = panel.sliders["v_load"].widget.min, panel.sliders["v_load"].widget.max
        steps = np.linspace(low, high, changes + 2)[1:-1]
        values = [float(v) for v in steps]
        warm = [float(v) for v in (steps[:-1] + steps[1:])[:warmup] / 2]  # between the timed steps
    else:
        name = design.topology.resistors[0]
        values = [float(v) for v in neighbours(design.values[name], series, count=(changes + warmup) // 2 + 2)]
        values = [v for v in values if v != design.values[name]]
        # The warm-up values from the far ends of the list, each change timed on a value of its own.
        head, tail = warmup // 2, len(values) - (warmup - warmup // 2)
        warm, values = values[:head] + values[tail:], values[head:tail]
    for value in warm:
        panel.update(**{name: value})
    totals, cpus, everything, phases = [], [], [], {phase: [] for phase in PHASES}
    enabled = gc.isenabled()
    for value in values[:changes]:
        gc.disable()  # as timeit does: a collection mid-change is not the panel's cost
        try:
            start, cpu = time.perf_counter(), time.process_time()
            applied = panel.update(**{name: value})
            elapsed, cpu = time.perf_counter() - start, time.process_time() - cpu
            panel.sources  # noqa: B018 -- reading them makes every closed plot of this design
            whole = time.perf_counter() - start
        finally:
            if enabled:
                gc.enable()
        if not applied:
            continue
        totals.append(elapsed)
        cpus.append(cpu)
        everything.append(whole)
        for phase in PHASES:
            phases[phase].append(panel.timings[phase])
    out = {"panel_update_s": statistics.median(totals), "panel_update_ms": 1e3 * statistics.median(totals),
           "panel_update_cpu_ms": 1e3 * statistics.median(cpus),
           "panel_update_all_views_ms": 1e3 * statistics.median(everything),
           "panel_updates": len(totals), "panel_points": points}
    out.update({f"panel_update_{phase}_s": statistics.median(v) for phase, v in phases.items()})
    # What the panel adds to the kit's own evaluation, as a ratio measured in this run.
    out["panel_update_over_evaluate"] = statistics.median(t / e for t, e in zip(totals, phases["evaluate"]))
    return out
