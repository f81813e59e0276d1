"""Matched groups: a shared common-mode spread, and mismatch between the members.

Transistors made together (one die, one matched dual) share the spread of
the process: their gain, saturation current or threshold move *together*
over the spec's range.  What differs between them is the mismatch, a small
random difference of each member from the group's mean (Pelgrom, Duinmaijer
& Welbers, "Matching properties of MOS transistors", IEEE JSSC 24(5), 1989;
Gray, Hurst, Lewis & Meyer, *Analysis and Design of Analog Integrated
Circuits*, current-mirror mismatch section -- both from memory):

* bipolar: ``ΔV_BE`` at equal collector current, i.e. ``ΔI_S/I_S =
  exp(ΔV_BE/V_T) - 1`` (taken at the reference temperature ``t_ref``, where
  the part's ``I_S`` is given), and ``Δβ_F/β_F``;
* MOSFET: ``ΔV_th`` and ``Δk/k``, either given directly or by the area law
  ``σ(ΔP) = A_P/sqrt(W L)`` with the spec's area constants and gate area.

A spec gives each mismatch as a **bound on the difference of two members**,
taken as 3 σ of that difference (an assumption, stated in reports, like a
± tolerance in RSS).  Each member then deviates from the group's mean by a
Gaussian of ``σ_member = σ_pair/sqrt(2)`` (two independent members differ by
``σ_pair``) in RSS and Monte Carlo, and lies within ``±bound/2`` of it in the
extreme-value analysis, so that any two members differ by at most the
bound.  Monte Carlo cuts each member's Gaussian at that ``±bound/2`` (the
bound is a maximum: parts beyond it are rejected), so its samples stay
points of the guaranteed box; the cut Gaussian's standard deviation is
about 0.90 of ``σ_member``.  The output's mismatch ``sigma`` is reported
for the uncut Gaussian (the usual first-order figure).  With the area law
a member of gate area ``A_i`` has ``σ_member =
A_P/sqrt(2 A_i)`` and the guarantee takes it within ``±(3/sqrt 2) σ_member``.

Matched groups come from the spec (``matched``) and from the topology:
:data:`ONE_DIE` lists the circuits that only work as one die, whose groups
are matched without being declared.  Of the kit's circuits that is the
ΔV_BE (PTAT) cell -- an area-ratioed core and its mirror, an integrated-
circuit design.  The other mirrors (basic, Wilson, cascode, β-helper, MOS)
are built from discrete parts as well as on a die, so their matching is what
the spec declares.

Examples
--------
>>> import kit
>>> from kit.analysis.spec import Spec
>>> d = kit.design("basic_mirror", "npn")
>>> spec = Spec(0.7e-3, 0.05, beta={"npn": (100.0, 300.0)}, matched=(("Q1", "Q2"),),
...             mismatch_vbe=1e-3)
>>> [g.members for g in groups(spec, d)]
[('Q1', 'Q2')]
>>> [f.name for f in group_factors(spec, d, groups(spec, d))]
['Q1+Q2.beta_f', 'Q1.mismatch_vbe', 'Q2.mismatch_vbe']
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from kit.devices.base import BOLTZMANN_OVER_CHARGE
from kit.errors import ParameterError

# Circuits that imply one die: topology key -> groups of parts (see the module docstring).
ONE_DIE = {"ptat_cell": (("Q1", "Q2"), ("Q3", "Q4", "Q5"))}
SIGMA_PER_BOUND = 3.0  # a mismatch bound is 3 sigma of the difference of two members (an assumption)
# Each member within ± EVA_MEMBER_SIGMAS sigma_member of the mean: two equal members then
# differ by at most 3 sigma of their difference.
EVA_MEMBER_SIGMAS = SIGMA_PER_BOUND / math.sqrt(2.0)
KINDS = {"bjt": "beta_f", "mos": "v_th"}  # a part's kind, told by the parameter only it has


@dataclass(frozen=True)
class Group:
    """Transistors of one kind and polarity made together; ``source`` is "spec" or "topology"."""

    members: tuple
    kind: str  # "bjt" or "mos"
    source: str

    @property
    def text(self):
        return ", ".join(self.members)


def _kind_of(model):
    return next((kind for kind, name in KINDS.items() if name in model.values), None)


def groups(spec, design):
    """The matched groups of ``spec`` on ``design``: the spec's, then those the topology implies.

    A group the topology implies is dropped when the spec's groups already
    hold one of its members (the spec's word wins).
    """
    out = []
    taken = set()
    implied = ONE_DIE.get(design.topology.key, ())
    for source, entries in (("spec", spec.matched), ("topology", implied)):
        for members in entries:
            if source == "topology" and taken & set(members):
                continue
            models = [design.devices.get(name) for name in members]
            kinds = {_kind_of(m) for m in models if m is not None}
            stray = [n for n, m in zip(members, models) if m is None or _kind_of(m) is None]
            if stray:
                raise ParameterError("names no transistor of this design", parameter="matched", value=stray[0],
                                     valid=", ".join(sorted(n for n, m in design.devices.items()
                                                            if _kind_of(m))))
            polarities = {m.polarity for m in models}
            if len(kinds) != 1 or len(polarities) != 1:
                raise ParameterError("a matched group holds transistors of one kind and polarity",
                                     parameter="matched", value=list(members),
                                     valid="e.g. two NPN or two NMOS parts")
            if len(set(members)) != len(members) or len(members) < 2:
                raise ParameterError("a matched group names two or more different transistors",
                                     parameter="matched", value=list(members), valid='e.g. ["Q1", "Q2"]')
            if taken & set(members):
                raise ParameterError("a transistor is in two matched groups", parameter="matched",
                                     value=sorted(taken & set(members))[0], valid="each part in one group")
            taken |= set(members)
            out.append(Group(tuple(members), kinds.pop(), source))
    return out


def _v_t(design):
    return BOLTZMANN_OVER_CHARGE * design.parameters()["t_ref"]


def _member_sigmas(spec, group, name):
    """``{member: sigma_member}`` of the mismatch ``name`` for ``group`` (empty when not given)."""
    if name in ("mismatch_vth", "mismatch_k"):
        constant = spec.a_vth if name == "mismatch_vth" else spec.a_k
        if constant:
            return {m: constant / math.sqrt(2.0 * spec.gate_area_of(m)) for m in group.members}
    bound = getattr(spec, name)
    if not bound:
        return {}
    sigma = bound / SIGMA_PER_BOUND / math.sqrt(2.0)
    return {m: sigma for m in group.members}


# mismatch name -> (kind, parameter, how a member's deviation x changes it, words)
MISMATCHES = {
    "mismatch_vbe": ("bjt", "i_s", "junction", "ΔV_BE"),
    "mismatch_beta": ("bjt", "beta_f", "relative", "Δβ_F/β_F"),
    "mismatch_vth": ("mos", "v_th", "offset", "ΔV_th"),
    "mismatch_k": ("mos", "k_prime", "relative", "Δk/k"),
}


def group_factors(spec, design, found):
    """The factors of the matched groups ``found``: one common gain per group, then each member's mismatch.

    The common gain ranges over the spec's gain range for the group's
    polarity (or the first member's own entry); each member keeps its own
    nominal gain, scaled with the common one.  Mismatch factors have the
    kind "mismatch", a Gaussian ``sigma`` and the extreme-value bound of
    the module docstring.
    """
    from kit.analysis.spec import Factor

    out = []
    for group in found:
        if group.kind == "bjt":
            first = design.devices[group.members[0]]
            ranges = {spec.beta.get(m) or spec.beta.get(design.devices[m].polarity) for m in group.members}
            if len(ranges) > 1:
                raise ParameterError("members of a matched group need one gain range", parameter="beta",
                                     value=group.members[0], valid="one range for the group's polarity")
            bounds = ranges.pop()
            if bounds is not None:
                targets = tuple((f"{m}.beta_f", "scale", bounds) for m in group.members)
                out.append(Factor("+".join(group.members) + ".beta_f", first.beta_f, bounds[0], bounds[1],
                                  "part", spec.beta_distribution,
                                  label=f"β_F of {group.text} (matched)",
                                  targets=targets, group=group.members))
        for name, (kind, parameter, law, words) in MISMATCHES.items():
            if kind != group.kind:
                continue
            limits = None
            if parameter == "beta_f":
                limits = spec.beta.get(group.members[0]) or spec.beta.get(design.devices[group.members[0]].polarity)
            for member, sigma in _member_sigmas(spec, group, name).items():
                half = EVA_MEMBER_SIGMAS * sigma
                out.append(Factor(f"{member}.{name}", 0.0, -half, half, "mismatch", "normal",
                                  label=f"{words} of {member} ({group.text} matched)",
                                  targets=((f"{member}.{parameter}", law, limits),), sigma=sigma,
                                  group=group.members))
    return out


def check_used(spec, found):
    """Refuse a mismatch the design has no matched group of the right kind for (it would do nothing)."""
    kinds = {g.kind for g in found}
    for name, (kind, _, _, _) in MISMATCHES.items():
        constant = {"mismatch_vth": spec.a_vth, "mismatch_k": spec.a_k}.get(name, 0.0)
        given = getattr(spec, name) or constant
        if given and kind not in kinds:
            what = "bipolar" if kind == "bjt" else "MOSFET"
            raise ParameterError(f"no matched {what} group in this design for it to act on",
                                 parameter=name, value=given,
                                 valid=f"name a group of {what} parts in matched, or leave it 0")


def expand(box_factors, changes, base, v_t):
    """Flat parameter values for ``changes`` (factor name -> values); other names pass through.

    Plain factors set their parameter.  A matched group's common gain scales
    each member's nominal gain; then each member's mismatch acts on what that
    gave: ``I_S · exp(-x/V_T)`` (a V_BE shift x at equal current, V_T at
    ``t_ref``), ``β_F·(1 + x)``, ``V_th + x``, ``k′·(1 + x)``.  A member's gain
    stays inside the spec's gain range (the range bounds every part).
    """
    by_name = {f.name: f for f in box_factors}
    flat = {}
    later = []
    for name, value in changes.items():
        f = by_name.get(name)
        if f is None or not f.targets:
            flat[name] = value
            continue
        for target, law, limits in f.targets:
            if law == "scale":
                scaled = base[target] * (np.asarray(value, dtype=float) / f.nominal)
                flat[target] = np.clip(scaled, *limits) if limits is not None else scaled
            else:
                later.append((target, law, limits, np.asarray(value, dtype=float)))
    for target, law, limits, x in later:
        now = flat.get(target, base[target])
        if law == "junction":
            now = now * np.exp(-x / v_t)
        elif law == "relative":
            now = now * (1.0 + x)
        else:  # offset
            now = now + x
        if limits is not None:
            now = np.clip(now, *limits)
        flat[target] = now
    return flat


def slopes(box_factors, di_dp, index, base, v_t):
    """``dI/dx`` of each factor (rows) at the solved points (columns), by the chain rule.

    The factors' targets change by ``dp/dx`` taken at the nominal part values
    (exact at the nominal point; elsewhere it keeps the sign, which is all the
    corner search asks of it).
    """
    rows = []
    for f in box_factors:
        if not f.targets:
            rows.append(di_dp[index[f.name]])
            continue
        row = 0.0
        for target, law, _ in f.targets:
            p = base[target]
            rate = {"scale": p / f.nominal if f.nominal else 1.0, "junction": -p / v_t,
                    "relative": p, "offset": 1.0}[law]
            row = row + di_dp[index[target]] * rate
        rows.append(np.asarray(row, dtype=float))
    return np.array(rows) if rows else np.zeros((0, np.shape(di_dp)[-1]))


def output_mismatch(box_factors, slope, current):
    """``{group text: {"sigma", "relative_sigma", "linear_bound"}}`` of the output current at nominal.

    ``sigma`` is ``sqrt(sum (dI/dx_i sigma_i)^2)`` over the group's members
    (first order); ``linear_bound`` is ``sum |dI/dx_i| half_range_i``.
    """
    out = {}
    for f, s in zip(box_factors, slope):
        if f.kind != "mismatch":
            continue
        entry = out.setdefault(", ".join(f.group), {"variance": 0.0, "linear_bound": 0.0})
        entry["variance"] += float(s * f.sigma) ** 2
        entry["linear_bound"] += float(abs(s) * f.half_range)
    return {k: {"sigma": math.sqrt(v["variance"]), "relative_sigma": math.sqrt(v["variance"]) / abs(current),
                "linear_bound": v["linear_bound"]} for k, v in out.items()}
