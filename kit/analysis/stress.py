"""Stress over the spec box: each part's largest power and temperature, and the fault cases.

For every part that dissipates (transistors, resistors, zeners, diodes)
:func:`stress_over_box` finds the largest power and the hottest junction
(a resistor's body is taken at the ambient: no thermal resistance is
known for it) over the whole tolerance box of a spec — every corner, a
random sample of the interior, and a sweep along each factor through the
worst point found — with the conditions where it happens, the smallest distance
to its breakdown voltage (V) and the margin to its power rating:

* a transistor: ``(T_J(max) - T_j) / (T_J(max) - T_ambient)``, the
  fraction of its derated allowance left (a linear derating to
  ``T_J(max)``; with one package per part this is ``1 - P / P_allowed``);
* a resistor: ``1 - P / P_rated`` (none when it has no rating).

An op-amp that drives a pass device is judged by its output stage: its
output current is what the parts on its output node draw (a MOSFET or
JFET gate nothing at DC, a transistor's base its base current, a resistor
its Ohm's-law current), and the output stage dissipates
``(V+ - V_o) I_o`` while it sources and ``(V_o - V-) |I_o|`` while it sinks
(the op-amp's quiescent supply power is its own and not counted).  No part
class or datasheet entry states an output-current or output-power rating,
so it has no rating margin; a gate drive is reported as negligible.

Every point lies inside the spec (load voltage, supply, temperature,
tolerances), so nothing is quoted at a load voltage the spec excludes.
:func:`fault_cases` solves the output shorted (the output at the rail the
load returns to) and open (the output at the other rail) over the
corners of the box and says whether every part survives.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass, field

import numpy as np

from kit.analysis.thermal import junction_temperatures

MAX_CORNER_FACTORS = 12
RANDOM_CORNERS = 4096
INTERIOR_SAMPLES = 1024
AXIS_POINTS = 17
RATED_CAUSES = ("power", "breakdown")  # what a fault must not break (saturation there is expected)


@dataclass(frozen=True)
class PartStress:
    """The largest stress of one part over the box (see the module docstring)."""

    part: str
    kind: str
    power: float  # W, largest over the box
    junction_temperature: float  # K, hottest over the box (a resistor: its ambient)
    rating_margin: float | None  # smallest over the box; < 0 over the rating
    conditions: dict  # where the junction is hottest (resistors: where the power is largest)
    power_conditions: dict  # where the power is largest
    basis: str
    runaway_points: int = 0
    breakdown_margin: float | None = None  # V to the breakdown rating, smallest over the box
    output_current: float | None = None  # an op-amp: its output current (A, + sourced) where its power is largest
    negligible: bool = False  # an op-amp driving only gates: no DC output current at all

    def to_dict(self):
        return dict(self.__dict__)


@dataclass(frozen=True)
class FaultCase:
    """One fault (``"output shorted"`` or ``"open load"``): survives or not, and why."""

    fault: str
    v_load: float
    survives: bool | None  # None: the circuit has no solution there to judge
    reasons: tuple = ()
    hottest: dict = field(default_factory=dict)  # part -> (power W, junction K) at its worst

    def to_dict(self):
        return {"fault": self.fault, "v_load": self.v_load, "survives": self.survives,
                "reasons": list(self.reasons),
                "hottest": {k: {"power": p, "junction_temperature": t} for k, (p, t) in self.hottest.items()}}


def _corners(box_factors, rng):
    if len(box_factors) <= MAX_CORNER_FACTORS:
        pick = np.array(list(itertools.product((0, 1), repeat=len(box_factors))), dtype=float)
    else:
        pick = rng.integers(0, 2, size=(RANDOM_CORNERS, len(box_factors))).astype(float)
    return {f.name: f.low + pick[:, i] * (f.high - f.low) for i, f in enumerate(box_factors)}


def _stack(blocks):
    return {k: np.concatenate([b[k] for b in blocks]) for k in blocks[0]} if blocks else {}


def _dissipating(model):
    return [p for p in model.parts if p.kind.key not in ("opamp", "source")]


def _into_terminal(part, terminal, j, params):
    """DC current into ``terminal`` of ``part`` from its solved quantities, or None if the kit cannot tell."""
    key = part.kind.key
    if key == "resistor":  # i_r flows from a to b (kit.circuit.Circuit.resistor)
        return j["i_r"] if terminal == "a" else -j["i_r"]
    if key in ("mos", "jfet") and terminal == "g":  # the gate draws nothing at DC in their laws
        return np.zeros_like(np.asarray(j[part.kind.quantities[0]], dtype=float))
    if key == "bjt" and terminal == "b":  # the base current flows into an NPN's base, out of a PNP's
        return (1.0 if part.sense == "n" else -1.0) * j["i_b"]
    if key == "opamp" and terminal in ("p", "n"):  # the bias current flows into the - input only
        return params.i_bias * np.ones_like(np.asarray(j["v_o"], dtype=float)) if terminal == "n" \
            else np.zeros_like(np.asarray(j["v_o"], dtype=float))
    return None


def opamp_output(points, name):
    """``(current, power, gates_only)`` of op-amp ``name``'s output stage at solved points, or None.

    ``current`` (A) is positive where the output sources current, ``power``
    (W) the output stage's ``(V+ - V_o) I_o`` sourcing or ``(V_o - V-) |I_o|``
    sinking, ``gates_only`` True where only gates (no DC current) hang on the
    output.  None when a part on the output node draws a current the kit
    cannot read off its solved quantities.

    Examples
    --------
    >>> import kit
    >>> from kit.analysis.evaluation import model_of
    >>> from kit.model.solve import solve_points
    >>> d = kit.design("opamp_mos_source")
    >>> current, power, gates_only = opamp_output(solve_points(model_of(d), d.parameters()), "U1")
    >>> float(current[0]), float(power[0]), gates_only
    (0.0, 0.0, True)
    """
    model = points.model
    amp = model.structure.part(name)
    node = amp.nodes["o"]
    j = points.junctions[name]
    current = np.zeros(points.size)
    gates_only = True
    for part in model.parts:
        for terminal, at in part.nodes.items():
            if at != node or (part.name == name and terminal == "o"):
                continue
            drawn = _into_terminal(part, terminal, points.junctions[part.name], model.params(points.p, part))
            if drawn is None:
                return None
            gates_only &= part.kind.key in ("mos", "jfet") and terminal == "g"
            current = current + np.broadcast_to(np.asarray(drawn, dtype=float), (points.size,))
    power = np.where(current >= 0, (j["v_pos"] - j["v_o"]) * current, (j["v_o"] - j["v_neg"]) * -current)
    return current, np.maximum(power, 0.0), bool(gates_only)


def _amplifiers(model):
    return [p for p in model.parts if p.kind.key == "opamp"]


class _Sampled:
    """Box points solved, with each part's power, temperature and rating margin."""

    def __init__(self, solve, box_factors, changes, base):
        self.changes = changes
        self.points = points = solve(changes)
        model = points.model
        self.ok = points.converged
        self.runaway = getattr(points, "runaway", np.zeros(points.size, dtype=bool))
        junctions = junction_temperatures(points)
        ambient = points.temp
        self.power, self.temperature, self.margin, self.volts = {}, {}, {}, {}
        margins = points.margins()
        for part in _dissipating(model):
            breakdown = margins.get((part.name, "breakdown"))
            self.volts[part.name] = (np.where(self.ok, np.broadcast_to(breakdown, (points.size,)), np.inf)
                                     if breakdown is not None else np.full(points.size, np.inf))
            j = points.junctions[part.name]
            power = np.where(self.ok, part.kind.dissipation(j), -np.inf)
            params = model.params(points.p, part)
            if "t_j_max" in part.params:
                t_j = junctions.get(part.name, ambient)
                margin = (params.t_j_max - t_j) / (params.t_j_max - ambient)
            elif "p_rated" in part.params:
                t_j = ambient
                with np.errstate(divide="ignore", invalid="ignore"):
                    margin = np.where(np.isfinite(params.p_rated), 1 - power / params.p_rated, np.inf)
            else:
                t_j, margin = ambient, np.full(points.size, np.inf)
            self.power[part.name] = power
            self.temperature[part.name] = np.where(self.ok, np.broadcast_to(t_j, (points.size,)), -np.inf)
            self.margin[part.name] = np.where(self.ok, margin, np.inf)
        self.current, self.gates_only = {}, {}
        for part in _amplifiers(model):
            found = opamp_output(points, part.name)
            if found is None:
                continue
            current, power, self.gates_only[part.name] = found
            self.current[part.name] = current
            self.power[part.name] = np.where(self.ok, power, -np.inf)
            self.temperature[part.name] = np.where(self.ok, ambient, -np.inf)  # no thermal resistance known
            self.margin[part.name] = np.full(points.size, np.inf)  # no output rating known
            self.volts[part.name] = np.full(points.size, np.inf)


def _conditions(changes, k, base, box_factors):
    out = {"v_load": float(base["v_load"])}
    for f in box_factors:
        out[f.name] = float(changes[f.name][k])
    return out


def stress_over_box(solve, box_factors, base, seed=1):
    """Each dissipating part's worst stress over the box.

    Parameters
    ----------
    solve : callable
        Factor values (name -> array) -> solved, self-heated points (as the
        worst-case box solves them).
    box_factors : list of kit.analysis.spec.Factor
    base : dict
        The design's parameter values (for conditions the spec does not vary).

    Returns
    -------
    list of PartStress, hottest margin first.
    """
    rng = np.random.default_rng(seed)
    if box_factors:
        blocks = [_corners(box_factors, rng),
                  {f.name: rng.uniform(f.low, f.high, INTERIOR_SAMPLES) for f in box_factors}]
        first = _Sampled(solve, box_factors, _stack(blocks), base)
    else:
        first = _Sampled(solve, box_factors, {"temp": np.array([base["temp"]])}, base)
    samples = [first]
    if box_factors:
        # Through each part's worst point so far, a sweep along every factor: an interior maximum
        # (V_CE I_C peaks inside the load range) is found to within a step of the axis.
        lines = []
        for name in first.power:
            for values in (first.power[name], first.temperature[name]):
                k = int(np.argmax(values))
                for f in box_factors:
                    line = {g.name: np.full(AXIS_POINTS, first.changes[g.name][k]) for g in box_factors}
                    line[f.name] = np.linspace(f.low, f.high, AXIS_POINTS)
                    lines.append(line)
        samples.append(_Sampled(solve, box_factors, _stack(lines), base))
    out = []
    model = first.points.model
    for part in _dissipating(model) + [p for p in _amplifiers(model) if p.name in first.power]:
        name = part.name
        power = np.concatenate([s.power[name] for s in samples])
        temperature = np.concatenate([s.temperature[name] for s in samples])
        margin = np.concatenate([s.margin[name] for s in samples])
        changes = _stack([s.changes for s in samples])
        runaway = int(sum(int(np.count_nonzero(s.runaway)) for s in samples))
        volts = float(np.min(np.concatenate([s.volts[name] for s in samples])))
        if not np.any(np.isfinite(power)):
            continue
        kp = int(np.argmax(power))
        heated = "t_j_max" in part.params
        kt = int(np.argmax(temperature)) if heated else kp
        worst_margin = float(np.min(margin))
        amplifier = part.kind.key == "opamp"
        current = float(np.concatenate([s.current[name] for s in samples])[kp]) if amplifier else None
        negligible = amplifier and all(s.gates_only[name] for s in samples)
        if negligible:
            basis = ("output drives only a gate: no DC output current, output-stage dissipation negligible "
                     "(gate charge on fast changes not modelled); no output rating known")
        elif amplifier:
            basis = ("output stage: (V+ − V_o)·I_o sourcing, (V_o − V−)·|I_o| sinking, quiescent supply power "
                     "not counted; at the ambient; no output-current or output-power rating known "
                     "(no part class or datasheet entry states one)")
        elif heated:
            basis = ("junction: ambient + thermal network × power; margin (T_J(max) − T_j)/(T_J(max) − T_a), "
                     "a linear derating to T_J(max)")
        elif "p_rated" in part.params:
            basis = "body at the ambient (no thermal resistance known); margin 1 − P/P_rated"
        else:
            basis = "at the ambient; no rating known"
        out.append(PartStress(name, part.kind.key, float(power[kp]), float(temperature[kt]),
                              worst_margin if np.isfinite(worst_margin) else None,
                              _conditions(changes, kt, base, box_factors),
                              _conditions(changes, kp, base, box_factors), basis, runaway,
                              volts if np.isfinite(volts) else None, current, bool(negligible)))
    return sorted(out, key=lambda s: (s.rating_margin is None, s.rating_margin if s.rating_margin is not None
                                      else 0.0, -s.power))


def fault_cases(solve, box_factors, base, sense):
    """Output shorted and open load over the corners of the box (the load voltage fixed by the fault).

    ``sense`` ``"n"``: a sink, whose load returns to the supply (shorted: the
    output at ``v_supply``; open: at 0 V); ``"p"``: a source, the other way.
    """
    if "v_supply" not in base:
        return []
    others = [f for f in box_factors if f.name != "v_load"]
    supplies = next((np.array([f.low, f.high]) for f in others if f.name == "v_supply"),
                    np.array([base["v_supply"]]))
    corners = _corners(others, np.random.default_rng(7)) if others else {}
    out = []
    for fault, at_supply in (("output shorted", sense == "n"), ("open load", sense != "n")):
        count = len(next(iter(corners.values()))) if corners else 1
        changes = {k: np.asarray(v, dtype=float) for k, v in corners.items()}
        if at_supply:
            changes["v_load"] = changes["v_supply"] if "v_supply" in changes else np.full(count, base["v_supply"])
            v_text = float(np.max(supplies))
        else:
            changes["v_load"] = np.zeros(count)
            v_text = 0.0
        points = solve(changes)
        runaway = getattr(points, "runaway", np.zeros(points.size, dtype=bool))
        reasons = []
        if np.any(runaway):
            reasons.append(f"thermal runaway at {int(np.count_nonzero(runaway))} of {points.size} corners")
        solved = points.converged
        if not np.any(solved) and not np.any(runaway):
            out.append(FaultCase(fault, v_text, None, ("no solution of the circuit with the output there",)))
            continue
        margins = points.margins()
        broken = set()
        for (part, cause), margin in margins.items():
            if part is None or cause not in RATED_CAUSES:
                continue
            bad = solved & (np.broadcast_to(margin, (points.size,)) < 0)
            if np.any(bad):
                broken.add(f"{part} {points.cause_text(part, cause)}")
        junctions = junction_temperatures(points)
        for part in points.model.structure.devices:
            if "t_j_max" not in part.params:
                continue
            limit = points.model.params(points.p, part).t_j_max
            hot = solved & (np.broadcast_to(junctions[part.name], (points.size,)) > limit)
            if np.any(hot):
                broken.add(f"{part.name} junction above its T_J(max)")
        reasons += sorted(broken)
        hottest = {}
        for part in _dissipating(points.model):
            if part.name not in points.junctions or not np.any(solved):
                continue
            power = np.where(solved, part.kind.dissipation(points.junctions[part.name]), -np.inf)
            k = int(np.argmax(power))
            t_j = np.broadcast_to(junctions.get(part.name, points.temp), (points.size,))
            hottest[part.name] = (float(power[k]), float(np.max(np.where(solved, t_j, -np.inf))))
        out.append(FaultCase(fault, v_text, not reasons, tuple(reasons), hottest))
    return out
