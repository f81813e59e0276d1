"""Random designs and a judge of accepted points, shared by the property test and the fuzz run.

A design is drawn near a topology's defaults, across the whole valid range of
its values and parts, or with one value outside its range.  Every outcome is
sorted into one of three bins:

``accepted``
    :func:`kit.evaluate` returned, and :func:`judge` found nothing wrong;
``refused``
    a :class:`kit.DesignError` naming a parameter of the design;
``bad``
    anything else: an accepted point that breaks its parts' own conditions,
    a NaN anywhere in the result, a warning, another exception, a refusal
    naming no parameter or one the design does not have.

The judge reads each part's conditions from the solved node voltages by the
part's kind (regions, margins, the domain of its laws), never from the
evaluation's own verdict; the scenarios are invented for these tests.
"""

from __future__ import annotations

import json
import math
import warnings

import numpy as np

import kit
from kit import topologies
from kit.model.vocabulary import vocabulary

# Device parameters that shape the law and are worth varying (each kind's own names).
VARIED = {
    "bjt": ("beta_f", "v_a", "i_s", "beta_tc", "beta_temp_exponent", "beta_r"),
    "mos": ("k_prime", "v_th", "lambda_clm"),
    "zener": ("v_z0", "r_z", "tc_z"),
    "opamp": ("a_ol", "v_os", "i_bias"),
    "diode": ("i_s", "n"),
}
MODES = ("near", "wide", "invalid")


def every_topology():
    """``(key, polarity)`` of every registered topology and polarity."""
    return [(t.key, pol) for t in topologies.all_topologies() for pol in t.polarities]


def _log_uniform(rng, low, high):
    if low > 0:
        return float(np.exp(rng.uniform(np.log(low), np.log(high))))
    return float(rng.uniform(low, high))


def _near(rng, value, spread):
    if value == 0:
        return value
    return float(value * np.exp(rng.normal(0.0, spread)))


def random_design(rng, key, polarity, mode):
    """Keyword arguments of :func:`kit.design` for one random design of ``key``."""
    top = topologies.get(key)
    words = vocabulary(top, polarity)
    values = {}
    for v in top.values:
        default = v.default_for(polarity)
        if mode == "near":
            value = _near(rng, default, 0.25)
        else:
            value = _log_uniform(rng, v.low, v.high) if v.low > 0 else float(rng.uniform(v.low, v.high))
        if v.kind == "load" and mode == "near":
            value = default + rng.normal(0.0, 1.0 + 0.1 * abs(default))
        value = min(max(value, v.low), v.high)
        if v.whole:
            value = float(round(value))
        values[v.name] = value
    devices = {}
    structure = kit.design(key, polarity).structure
    for part in structure.devices:
        changes = {}
        for name in VARIED.get(part.kind.key, ()):
            param = part.kind.param(name)
            base = kit.design(key, polarity).devices[part.name].values[name]
            if mode == "near":
                value = base + rng.normal(0, 0.005) if param.low < 0 else _near(rng, base, 0.3)
            else:
                value = _log_uniform(rng, param.low, param.high) if param.low > 0 else float(
                    rng.uniform(param.low, param.high))
            changes[name] = min(max(value, param.low), param.high)
        if part.kind.key == "bjt" and rng.random() < 0.15:
            changes["v_a"] = math.inf
        if changes and rng.random() < 0.8:
            devices[part.name] = changes
    temp = float(rng.uniform(220.0, 420.0)) if mode != "near" else float(rng.uniform(250.0, 370.0))
    tcr = {}
    for r in top.resistors:
        if rng.random() < 0.3:
            tcr[r] = float(rng.uniform(-5e-3, 5e-3) if mode != "near" else rng.uniform(-3e-4, 3e-4))
    kwargs = dict(values, devices=devices, temp=temp, tcr=tcr)
    if mode == "invalid":
        names = [n for n in values]
        name = names[int(rng.integers(len(names)))]
        e = words[name]
        kwargs[name] = float(rng.choice([e.low - abs(e.low) - 1.0, e.high * 10 + 1.0, -e.high - 1.0]))
    return kwargs


def finite_everywhere(obj, where="result"):
    """The first non-finite float in a nested structure of dicts, lists and floats, else None.

    Infinity is allowed where the kit means "ideal" (an R_out of a perfect
    part); NaN never is.
    """
    if isinstance(obj, dict):
        for k, v in obj.items():
            found = finite_everywhere(v, f"{where}.{k}")
            if found:
                return found
    elif isinstance(obj, (list, tuple)):
        for k, v in enumerate(obj):
            found = finite_everywhere(v, f"{where}[{k}]")
            if found:
                return found
    elif isinstance(obj, (float, np.floating)) and math.isnan(obj):
        return where
    elif isinstance(obj, np.ndarray) and obj.dtype.kind == "f" and np.isnan(obj).any():
        return where
    return None


def judge(ev):
    """Problems of an accepted evaluation, judged from its node voltages (empty list: none).

    Each part's exported quantities are recomputed from the solved node
    voltages and its kind's own regions, margins and law domains are read
    from them.
    """
    problems = []
    points = ev.points
    model = points.model
    x = np.array([[ev.node_voltages[n]] for n in model.unknowns])
    q = points.q
    junctions = model.junctions(x, q)
    temp = points.temp
    residual = model.residuals(x, q)
    scale = model.scales(x, q)
    if not np.all(np.abs(residual) <= 1e-6 * scale + 1e-12):
        problems.append("node voltages do not satisfy KCL")
    for part in model.structure.devices:
        kind = part.kind
        j = junctions[part.name]
        p = model.params(points.p, part)
        region = kind.regions(j, p, temp, ev.edge)[0]
        if region != kind.good_region:
            problems.append(f"{part.name} {region}, not {kind.good_region}")
        for cause, margin in kind.margins(j, p, temp, ev.edge).items():
            if not margin[0] >= 0:
                problems.append(f"{part.name} margin {cause} = {margin[0]:.3g}")
        for param, (law, margin) in kind.domain(j, model.operating_of(part, q)).items():
            if not margin[0] > 0:
                problems.append(f"{part.name} outside its law: {law} ({margin[0]:.3g})")
    if len(ev.design.topology.polarities) == 2 and not ev.i_out > 0:
        # a sink or a source reports its current positive in its own sense
        problems.append(f"output current {ev.i_out:.3g} A flows the wrong way")
    where = finite_everywhere(ev.to_dict())
    if where:
        problems.append(f"NaN at {where}")
    try:
        json.dumps(ev.to_dict(), allow_nan=True)
        from kit.report import evaluation as report

        report.text(ev)
    except Exception as err:  # noqa: BLE001 - any failure of the report is a finding
        problems.append(f"report failed: {type(err).__name__}: {err}")
    return problems


def outcome(kwargs, key, polarity):
    """``("accepted", "")``, ``("refused", parameter)`` or ``("bad", why)`` for one design."""
    top = topologies.get(key)
    names = set(vocabulary(top, polarity)) | {"polarity", "edge", "design point"}
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        try:
            design = kit.design(key, polarity, **kwargs)
            ev = kit.evaluate(design)
        except kit.DesignError as err:
            if type(err).__name__ == "ConvergenceError" or err.parameter not in names - {"design point"}:
                return "bad", f"{type(err).__name__}: {err}"
            return "refused", err.parameter
        except Exception as err:  # noqa: BLE001 - a crash is a finding
            return "bad", f"{type(err).__name__}: {err}"
        problems = judge(ev)
    if problems:
        return "bad", "; ".join(problems)
    return "accepted", ""
