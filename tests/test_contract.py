"""The contract every topology keeps, checked for the whole registry and each of its polarities.

A new topology (one module in kit/topologies/) is covered here without editing
this file: every test is parametrized over :func:`kit.list_topologies` and each
topology's polarity words.  The checks:

(a) what is read off the circuit (parts, kinds, complementary parts, the
    values) agrees with the topology and with a fresh build of its circuit;
(b) every named closed form's assumptions agree with what it contains;
(c) the exact sensitivities (implicit function theorem) agree with central
    finite differences of the exact solve;
(d) the exact R_out agrees with a finite difference of I_out over V_load;
(e) the complementary design with the same magnitudes (the mirror image)
    gives the same currents;
(f) random designs either evaluate cleanly or are refused naming a parameter;
(g) the schematic renders with the present values;
(h) an example record of the topology evaluates.

Each check names its justification beside it.  Run time: the checks need the
compiled model of every topology and polarity; with generated code cached
(``BIASBOOK_CACHE``) the module takes about half a minute of CPU, a cold
cache adds the derivations (about 75 s of CPU for the registry of 22).
"""

from __future__ import annotations

import functools
import html
import math
import warnings
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, Phase, given, settings
from hypothesis import strategies as st

import kit
from kit.devices import KINDS
from kit.model.compiled import compile_model
from kit.model.solve import solve_points
from kit.model.structure import structure
from kit.model.vocabulary import vocabulary
from kit.record import load_record

EXAMPLES = sorted((Path(__file__).resolve().parents[1] / "examples").glob("*.toml"))
TOPOLOGIES = kit.list_topologies()
CASES = [(t, pol) for t in TOPOLOGIES for pol in t.polarities]
CASE_IDS = [f"{t.key}-{pol}" for t, pol in CASES]
BOTH = pytest.mark.parametrize("top, polarity", CASES, ids=CASE_IDS)
EACH_TOPOLOGY = pytest.mark.parametrize("top", TOPOLOGIES, ids=[t.key for t in TOPOLOGIES])
# Topologies with a complementary pair of polarity words (npn/pnp, nmos/pmos, ...);
# the Howland pump has one word, "bidirectional": its output takes either sign.
PAIRED = [t for t in TOPOLOGIES if len(t.polarities) == 2]
EACH_PAIR = pytest.mark.parametrize("top", PAIRED, ids=[t.key for t in PAIRED])
# A two-terminal regulator sinking from a load that returns to the supply: the
# supply bounds the load voltages but enters no equation of the circuit.
SUPPLY_OUTSIDE = {("jfet_source", "njfet")}


def _device_words(top):
    """True when the topology's polarity words name its devices' senses (npn, nmos, njfet)."""
    return len(top.polarities) == 2

# A point away from the reference temperature, so that every temperature
# coefficient (TCR, tc of a set voltage, beta_tc, ...) moves the current and
# its finite difference is not trivially zero.
WARM = 323.15  # K, 50 degC (t_ref stays 25 degC)


@functools.lru_cache(maxsize=None)
def circuit(key, polarity):
    """The exact circuit (SymPy), built afresh from the topology's build()."""
    return kit.topology(key).circuit(polarity)


@functools.lru_cache(maxsize=None)
def warm_design(key, polarity):
    return kit.design(key, polarity, temp=WARM)


@functools.lru_cache(maxsize=None)
def warm_evaluation(key, polarity):
    return kit.evaluate(warm_design(key, polarity))


def model(top, polarity):
    return compile_model(top, polarity)


def parameters_reached(c, expression):
    """Names of the designer's parameters an expression in operating symbols depends on."""
    import sympy as sp

    out = set()
    for symbol in sp.sympify(expression).free_symbols:  # safe: the kit's own expression
        out |= {s.name for s in c.operating.get(symbol, symbol).free_symbols}
    return out


# ---------------------------------------------------------------------------------------------
# (a) metadata read off the circuit agrees with the topology

@BOTH
def test_parts_read_off_the_circuit_agree_with_a_fresh_build(top, polarity):
    # The structure comes from the generated code's manifest (or its own cache
    # file); a fresh build of the circuit must say the same.  Consistency check,
    # no outside source.
    s = structure(top, polarity)
    eq = circuit(top.key, polarity).equations()
    built = [(p.name, p.kind.key, p.sense, dict(p.nodes), p.value) for p in eq.parts.values()]
    read = [(p.name, p.kind.key, p.sense, dict(p.nodes), p.value) for p in s.parts]
    assert read == built
    assert s.output_part == eq.output_part
    assert [f.key for f in s.closed_forms] == [f.key for f in eq.closed_forms]
    assert all(p.kind.key in KINDS and KINDS[p.kind.key] is p.kind for p in s.parts)
    assert s.devices, "a current source needs at least one device with a model of its own"


@BOTH
def test_design_holds_one_model_per_device_of_its_kind_and_polarity(top, polarity):
    s = structure(top, polarity)
    d = kit.design(top.key, polarity)
    assert set(d.devices) == set(s.device_names)
    for part in s.devices:
        model_ = d.devices[part.name]
        assert model_.kind is part.kind and model_.sense == part.sense
        assert model_.polarity == part.kind.words[part.sense]
    # The design speaks the words of its main kind of part (DEVELOPERS.md,
    # "Polarity words"): at least one device of the design's sense is called so.
    sense = top.sense(polarity)
    if _device_words(top):
        assert any(p.sense == sense and p.kind.words[sense] == polarity for p in s.devices)
    else:  # a word of the circuit's own ("bidirectional"), not a device's
        assert not any(polarity in p.kind.words.values() for p in s.devices)


@BOTH
def test_output_direction_follows_the_output_device(top, polarity):
    # An NPN collector or NMOS drain sinks current, a PNP collector or PMOS
    # drain sources it (device physics, common practice): the sign with which
    # I_out is reported follows the part at the output.
    s = structure(top, polarity)
    m = model(top, polarity)
    if not _device_words(top):
        # the Howland pump feeds its load through a resistor, counted out of the pump
        assert s.output_part is None and m.output_sign == -1
        return
    assert s.output_part is not None
    assert m.output_sign == (1 if s.part(s.output_part).sense == "n" else -1)


@EACH_PAIR
def test_complementary_polarity_has_the_same_parts_each_of_the_other_sense(top):
    first, second = (structure(top, pol) for pol in top.polarities)
    # Same parts by name (their order may differ: a build adds the parts near
    # the emitter rail first), each of the kind's other polarity (complementary
    # devices; DEVELOPERS.md, "Polarity words").
    assert sorted(p.name for p in first.devices) == sorted(p.name for p in second.devices)
    for part in first.devices:
        other = second.part(part.name)
        assert other.kind is part.kind
        assert {part.sense, other.sense} == {"n", "p"}, part.name
    assert len(top.polarities) == 2 and top.polarities[0] != top.polarities[1]


@BOTH
def test_every_declared_value_reaches_the_exact_equations(top, polarity):
    # A value the designer sets but the exact circuit ignores would be a dead
    # control: each one enters the exact equations or a part's solved
    # quantities (the supply of an ideal reference only sets its headroom).  A
    # resistor value names a resistor of the circuit; the load value is the
    # output node's voltage.  Consistency check, no outside source.
    c = circuit(top.key, polarity)
    eq = c.equations()
    exact = set()
    for expression in eq.residuals + [eq.output] + [e for p in eq.parts.values() for e in p.q.values()]:
        exact |= expression.free_symbols
    for value in top.values:
        param = c.parameters.get(value.name)
        assert param is not None, f"{value.name} is declared but build() never uses it"
        feeds = {s for s, e in eq.operating.items() if param in e.free_symbols}
        if value.kind == "supply" and (top.key, polarity) in SUPPLY_OUTSIDE:
            assert not feeds & exact  # listed because it is so; keep the list honest
            continue
        assert feeds & exact, f"{value.name} does not reach the exact equations"
        for pol in top.polarities:
            default = value.default_for(pol)
            assert value.low <= default <= value.high, (value.name, pol, default)
            if value.whole:
                assert default == round(default)
    resistor_values = {p.value for p in eq.parts.values() if p.kind.key == "resistor"}
    assert resistor_values == set(top.resistors)
    loads = [v.name for v in top.values if v.kind == "load"]
    assert loads == ["v_load"]
    assert {s.name for s in eq.operating[eq.load].free_symbols} == {"v_load"}
    assert [v.name for v in top.values if v.kind == "supply"] == ["v_supply"]


@BOTH
def test_every_parameter_of_the_model_has_one_vocabulary_entry(top, polarity):
    words = vocabulary(top, polarity)
    m = model(top, polarity)
    assert set(m.parameter_names) == set(words)
    assert set(kit.design(top.key, polarity).parameters()) == set(words)


# ---------------------------------------------------------------------------------------------
# (b) closed forms and their assumption tags

# What each simplification means for the designer's parameters, stated here
# independently of kit/words.py: a form made under it cannot depend on the
# parameters the simplification removes (kind, parameter), or must depend on
# the one it introduces.  Sources: Early, Proc. IRE 40 (1952) for V_A -> inf;
# Ebers & Moll, Proc. IRE 42 (1954) for beta -> inf and the reverse terms;
# Sedra & Smith, Microelectronic Circuits, BJT and MOSFET chapters (from
# memory) for the fixed V_BE(on), the square law and lambda -> 0; the ideal
# op-amp of any analog text (infinite gain, no offset, no bias current); a
# stiff reference has no dynamic resistance.
REMOVES = {
    "no_early": {("bjt", "v_a")},
    "base_current_neglected": {("bjt", "beta_f"), ("bjt", "beta_r"), ("bjt", "beta_temp_exponent"),
                               ("bjt", "beta_tc")},
    "forward_active": {("bjt", "beta_r")},
    "equal_vbe": {("bjt", "i_s")},  # the junction drops cancel, and I_S with them
    "no_clm": {("mos", "lambda_clm")},
    "square_law": {("mos", "n_sub")},
    "stiff_reference": {("zener", "r_z")},
    "ideal_opamp": {("opamp", "a_ol"), ("opamp", "v_os"), ("opamp", "v_os_tc"), ("opamp", "i_bias")},
}
INTRODUCES = {"vbe_fixed": "v_be_on"}


def _removed_parameters(s, tag):
    kinds = {p.name: p.kind.key for p in s.parts}
    return {f"{part}.{key}" for part, kind in kinds.items() for k, key in REMOVES.get(tag, ()) if k == kind}


@BOTH
def test_closed_form_tags_agree_with_their_symbols(top, polarity):
    from kit.words import ASSUMPTIONS

    c = circuit(top.key, polarity)
    s = structure(top, polarity)
    forms = c.equations().closed_forms
    assert forms, "a topology states at least one closed form a designer would write"
    for form in forms:
        assert form.label and form.source, form.key
        symbols = {x.name for x in form.expression.free_symbols}
        reached = parameters_reached(c, form.expression)
        for tag in form.assumptions:
            assert tag in ASSUMPTIONS, f"{form.key}: unregistered assumption {tag}"
            assert ASSUMPTIONS[tag].problems(symbols) == [], (form.key, tag)
            assert not reached & _removed_parameters(s, tag), (form.key, tag, reached & _removed_parameters(s, tag))
            if tag in INTRODUCES:
                assert INTRODUCES[tag] in reached, (form.key, tag)


@BOTH
def test_generated_closed_forms_do_not_move_with_what_they_assume_away(top, polarity):
    # The generated code of each form, differentiated at a solved point, must
    # give exactly zero for every parameter its tags remove (the numeric side
    # of the check above: what the ledger reports is what the tags say).
    m = model(top, polarity)
    s = structure(top, polarity)
    points = warm_evaluation(top.key, polarity).points
    grads = m.closed_form_gradients(points.q)
    dq_dp = points.dq_dp[..., 0]
    for form in s.closed_forms:
        d_form = dict(zip(m.parameter_names, grads[form.key][:, 0] @ dq_dp))
        for tag in form.assumptions:
            for name in _removed_parameters(s, tag):
                assert d_form[name] == 0.0, (form.key, tag, name)


@pytest.mark.parametrize("text, tag, ok", [
    ("V_A_Q1", "no_early", False), ("beta_Q2", "base_current_neglected", False),
    ("V_T_Q1", "no_early", True), ("lambda_M1", "no_clm", False), ("r_z_D1", "stiff_reference", False),
])
def test_assumption_words_exclude_what_they_say(text, tag, ok):
    # Sanity of the tag check itself: the kit's words refuse the symbols they name.
    from kit.words import ASSUMPTIONS

    assert ASSUMPTIONS[tag].allows(text) is ok


# ---------------------------------------------------------------------------------------------
# (c) exact sensitivities against central finite differences of the exact solve
#
# Implicit function theorem: dx/dq = -J_x^-1 J_q, dI/dp by the chain rule
# (kit.model.solve).  Central difference (common practice): the error is
# truncation ~ h^2 |I'''|/6 plus the noise of the two solves, eps |I| / h.
# Steps are 1e-5 of the value (a zero value: 1e-6 of its valid span), so
# truncation stays below ~1e-7 relative even for exp(E_g/kT) (E_g/kT ~ 40,
# (40 h)^2 / 6 ~ 3e-8 at h = 1e-5 T).  A converged solve holds I to about
# 1e-13 relative (node voltages to a few ulps, times g_m/I ~ 1/V_T); the
# tolerance takes eps = 1e-11 (a hundredfold margin) and rtol = 1e-6.
FD_RELATIVE_STEP = 1e-5
FD_ZERO_STEP = 1e-6  # of the valid span, for a value at zero
SOLVE_NOISE = 1e-11
FD_RTOL = 1e-6


def _steps(top, polarity, values):
    words = vocabulary(top, polarity)
    steps = {}
    for name, value in values.items():
        if not math.isfinite(value):
            continue  # an ideal V_A or an unrated resistor: nothing to difference
        e = words[name]
        steps[name] = FD_RELATIVE_STEP * abs(value) if value else FD_ZERO_STEP * (e.high - e.low)
    return steps


def _central_differences(top, polarity, values, names, steps):
    """dI_out/dp by central differences, all 2N solves in one vectorised call."""
    m = model(top, polarity)
    n = len(names)
    arrays = {k: np.full(2 * n, v) for k, v in values.items()}
    for i, name in enumerate(names):
        arrays[name][2 * i] += steps[name]
        arrays[name][2 * i + 1] -= steps[name]
    points = solve_points(m, arrays)
    assert points.converged.all()
    current = points.i_out
    return {name: (current[2 * i] - current[2 * i + 1]) / (2 * steps[name]) for i, name in enumerate(names)}


@BOTH
def test_exact_sensitivities_agree_with_finite_differences(top, polarity):
    ev = warm_evaluation(top.key, polarity)
    values = ev.design.parameters()
    steps = _steps(top, polarity, values)
    names = sorted(steps)
    fd = _central_differences(top, polarity, values, names, steps)
    i_out = ev.i_out
    bad = {}
    for name in names:
        exact = ev.derivative(name)
        allowed = FD_RTOL * abs(exact) + SOLVE_NOISE * abs(i_out) / steps[name]
        if not abs(fd[name] - exact) <= allowed:
            bad[name] = (exact, fd[name], allowed)
    assert bad == {}
    # The check can fail: the temperature and at least one value move the current.
    assert abs(ev.derivative("temp")) > 0
    assert any(abs(ev.derivative(v.name)) > 0 for v in top.values if v.kind != "load")


# ---------------------------------------------------------------------------------------------
# (d) R_out against a finite difference over the load voltage
#
# R_out = ±1/(dI_out/dV_load), positive for a working source (DEVELOPERS.md,
# sign conventions; the small-signal definition of any analog text).  The step
# is a fifth of the distance to the nearer compliance edge, at most 0.2 V: the
# output characteristic is smooth inside compliance, and a large step keeps
# the solve's noise (eps |I| / h) well below the change of a current with a
# gigaohm R_out (I = 10 mA, R = 4 GΩ, h = 0.2 V: ΔI/I = 5e-9 against
# eps = 1e-11, a 0.6 % bound on dI/dV; about 1e-13 in practice).

@BOTH
def test_output_resistance_agrees_with_a_finite_difference(top, polarity):
    ev = warm_evaluation(top.key, polarity)
    values = ev.design.parameters()
    v_load = values["v_load"]
    room = min(v_load - ev.compliance.low.voltage, ev.compliance.high.voltage - v_load)
    h = min(0.2, room / 5)
    assert h > 0
    # Richardson extrapolation of central differences at h and h/2 cancels the
    # h^2 term (the slope itself moves with V_load through r_o = (V_A + V_CE)/I:
    # a plain central difference at 0.2 V is off by ~1e-5); what is left is
    # O(h^4) and the solve's noise, at most 3 eps |I| / h.
    coarse = _central_differences(top, polarity, values, ["v_load"], {"v_load": h})["v_load"]
    fine = _central_differences(top, polarity, values, ["v_load"], {"v_load": h / 2})["v_load"]
    slope = (4 * fine - coarse) / 3
    m = model(top, polarity)
    r_fd = m.output_sign / slope
    noise = 3 * SOLVE_NOISE * abs(ev.i_out) / h
    assert ev.r_out > 0 and r_fd > 0  # a working current source
    assert abs(1 / ev.r_out - 1 / r_fd) <= FD_RTOL / ev.r_out + noise


# ---------------------------------------------------------------------------------------------
# (e) the mirror image: the complementary design with the same magnitudes
#
# Reflecting every voltage about the supply, V -> V_CC - V, swaps the rails,
# turns NPN into PNP (NMOS into PMOS) and reverses every current; with the
# same device parameters the currents keep their magnitudes (the
# complementary-symmetry argument of any analog text; Ebers–Moll and the square
# law are odd in the normalised junction voltages).  The complementary design
# is found from the two circuits alone: resistors are matched by their
# reflected nodes (the divider's R1 from V_CC becomes the PNP's R2 to 0 V), a
# value held at a node (the load, a set voltage, a bias) solves
# V'(p') = V_CC - V(p), every other value keeps its number.
#
# An op-amp is the same part in both polarities: its input offset and bias
# current are its own, so the reflected circuit needs the op-amp with both
# reversed (V_OS -> -V_OS, I_B -> -I_B): kept as they are, an NPN sink runs
# at (V_SET + V_OS)/R_S and its PNP image at (V_SET - V_OS)/R_S, which is the
# physics, not a defect.  Kinds whose polarity words name complementary
# devices (BJT, MOSFET, diode, zener) carry magnitudes and need nothing.
ODD_UNDER_REFLECTION = {"opamp": ("v_os", "v_os_tc", "i_bias")}

# Not exact mirror images: the op-amp sources (opamp_bjt_source,
# opamp_mos_source).  The op-amp's gain law V_o = A_OL (V_+ + V_OS - V_-) is
# measured from 0 V in both polarities (the op-amp is one part, not a
# complementary pair), so a sink's output near 0 V and a source's output near
# the supply leave different input errors V_o/A_OL: with A_OL = 1e5 the
# images differ by ~1e-4 (BJT) and ~5e-4 (MOSFET).  Their image is exact in
# the limit A_OL -> inf; the check runs them at the largest valid A_OL
# (1e12, leaving ~1e-10).  Kind -> parameters set to their upper limit in
# both designs:
GAIN_TO_THE_LIMIT = {"opamp": ("a_ol",)}

# Topologies whose two polarities are not mirror images even so, and why (a
# new one must be listed here with its reason).  None at present.
NOT_MIRROR_IMAGES = {}


def _fixed_nodes(c):
    return {node: v for node, v in c.voltages.items() if node not in c.kcl and node not in c.driven}


def mirror_design(top, design_n):
    """The complementary design of ``design_n`` (first polarity) with the same magnitudes."""
    import sympy as sp

    n, p = top.polarities
    cn, cp = circuit(top.key, n), circuit(top.key, p)
    params_n = design_n.parameters()

    def in_parameters(c, expression):
        return sp.sympify(expression).xreplace(c.operating)  # safe: the kit's own expression

    supply = sp.Symbol("v_supply", real=True)
    fixed_n = {k: in_parameters(cn, v) for k, v in _fixed_nodes(cn).items()}
    fixed_p = {k: in_parameters(cp, v) for k, v in _fixed_nodes(cp).items()}
    ground = [k for k, v in fixed_n.items() if v == 0]
    rail = [k for k, v in fixed_n.items() if v == supply]
    assert len(ground) == 1 and len(rail) == 1 and set(fixed_n) == set(fixed_p)
    reflect = {ground[0]: rail[0], rail[0]: ground[0]}
    values = {}
    for node, v_n in fixed_n.items():
        if node in reflect:
            assert fixed_p[reflect[node]] == supply - v_n  # the rails trade places
            continue
        # The values held at this node, solved so that the identity holds at every temperature.
        free = sorted((s for s in fixed_p[node].free_symbols if s.name in top.value_names and s != supply),
                      key=lambda s: s.name)
        assert free, (node, fixed_p[node])
        unknowns = [sp.Dummy(s.name) for s in free]
        gap = sp.expand(fixed_p[node].subs(dict(zip(free, unknowns))) - (supply - v_n))
        temps = [cn.parameters["temp"], cn.parameters["t_ref"]]
        solution = sp.solve(sp.Poly(gap, *temps).coeffs(), unknowns, dict=True)
        assert len(solution) == 1 and set(solution[0]) == set(unknowns), (node, solution)
        for symbol, unknown in zip(free, unknowns):
            mirrored = solution[0][unknown]
            values[symbol.name] = float(mirrored.subs({s: params_n[s.name] for s in mirrored.free_symbols}))
    resistors_p = {frozenset(reflect.get(x, x) for x in part.nodes.values()): part
                   for part in cp.parts.values() if part.kind.key == "resistor"}
    for part in cn.parts.values():
        if part.kind.key == "resistor":
            twin = resistors_p[frozenset(part.nodes.values())]
            values[twin.value] = params_n[part.value]
    for value in top.values:
        values.setdefault(value.name, params_n[value.name])
    devices = {}
    for name, model_ in design_n.devices.items():
        odd = ODD_UNDER_REFLECTION.get(model_.kind.key, ())
        devices[name] = {k: -model_.values[k] if k in odd else model_.values[k] for k in model_.kind.law_params}
    return kit.design(top.key, p, devices=devices, temp=design_n.temp, t_ref=design_n.t_ref, **values)


@EACH_PAIR
def test_mirror_image_gives_the_same_currents(top):
    if top.key in NOT_MIRROR_IMAGES:
        pytest.skip(NOT_MIRROR_IMAGES[top.key])  # reason stated in the table above
    design_n = warm_design(top.key, top.polarities[0])
    for name, model_ in design_n.devices.items():
        for key in GAIN_TO_THE_LIMIT.get(model_.kind.key, ()):
            design_n = design_n.with_parameter(f"{name}.{key}", model_.kind.param(key).high)
    design_p = mirror_design(top, design_n)
    solved = {}
    for d in (design_n, design_p):
        points = solve_points(model(top, d.polarity), d.parameters()).require()
        solved[d.polarity] = points
    a, b = (solved[pol] for pol in top.polarities)
    # Both solves converge to ~1e-13 relative; 1e-9 leaves room for the two
    # polarities' different rounding.
    assert b.i_out[0] == pytest.approx(a.i_out[0], rel=1e-9)
    for part in structure(top, top.polarities[0]).devices:
        if part.kind.key in GAIN_TO_THE_LIMIT:
            continue  # the op-amp reports its output from 0 V, not a reflected quantity
        for key, value in a.junctions[part.name].items():
            name = part.name
            assert abs(b.junctions[name][key][0]) == pytest.approx(abs(value[0]), rel=1e-9, abs=1e-15), \
                (name, key)


# ---------------------------------------------------------------------------------------------
# (f) random designs: evaluated cleanly or refused naming a parameter
#
# Bad input gets a clear error naming the parameter (the project's rules); a
# design the kit accepts has every device where its kind works, and nothing in
# the result is NaN.  Warnings are errors (a NumPy overflow or invalid value
# is a defect even when the answer comes out finite).

def _spread(low, high, centre, decades):
    """Log-uniform around ``centre`` within ``decades``, clipped to [low, high]."""
    lo = max(low, centre * 10 ** -decades)
    hi = min(high, centre * 10 ** decades)
    return st.floats(math.log10(lo), math.log10(hi)).map(lambda u: 10 ** u) if hi > lo else st.just(centre)


@st.composite
def random_designs(draw, top, polarity):
    values = {}
    for v in top.values:
        default = v.default_for(polarity)
        if v.kind == "load":
            continue
        if v.whole:
            values[v.name] = float(draw(st.integers(int(v.low), int(min(v.high, 2 * default + 1)))))
        elif default > 0:
            values[v.name] = draw(_spread(v.low, v.high, default, 0.5 if v.kind == "supply" else 1.0))
        else:
            values[v.name] = draw(st.floats(v.low, v.high))
    # The load anywhere from a little below 0 V to a little above the supply:
    # inside and outside compliance both happen.
    values["v_load"] = draw(st.floats(-0.1, 1.1)) * values["v_supply"]
    devices = {}
    for part in structure(top, polarity).devices:
        changed = {}
        typical = part.kind.typical(part.sense).values | part.typical
        for key in part.kind.sensitivity:  # the parameters a designer varies per part
            param = part.kind.param(key)
            centre = typical[key]
            if centre > 0 and math.isfinite(centre):
                changed[key] = draw(_spread(param.low, param.high, centre, 0.5))
            else:
                changed[key] = draw(st.floats(max(param.low, -abs(centre) - 1e-3),
                                              min(param.high, abs(centre) + 1e-3)))
        devices[part.name] = changed
    temp = draw(st.floats(233.15, 398.15))  # -40 ... 125 degC, the usual industrial range
    return values, devices, temp


def _no_nan(value, where="result"):
    if isinstance(value, dict):
        for k, v in value.items():
            _no_nan(v, f"{where}.{k}")
    elif isinstance(value, (list, tuple)):
        for k, v in enumerate(value):
            _no_nan(v, f"{where}[{k}]")
    elif isinstance(value, np.ndarray) and value.dtype.kind == "f":
        assert not np.isnan(value).any(), where
    elif isinstance(value, float):
        assert not math.isnan(value), where


RANDOM_EXAMPLES = 2  # per topology and polarity (88 designs in all); the module's time budget is a minute
# No shrinking: each shrink step is a full evaluation, and a failing example
# is printed (and replayed, the profile being derandomized) as it was drawn.
RANDOM_PHASES = (Phase.explicit, Phase.generate)


@BOTH
def test_random_designs_evaluate_cleanly_or_are_refused_naming_a_parameter(top, polarity):
    words = vocabulary(top, polarity)

    @settings(max_examples=RANDOM_EXAMPLES, phases=RANDOM_PHASES, suppress_health_check=[HealthCheck.too_slow])
    @given(random_designs(top, polarity))
    def check(drawn):
        values, devices, temp = drawn
        with warnings.catch_warnings():
            warnings.simplefilter("error")
            try:
                d = kit.design(top.key, polarity, devices=devices, temp=temp, **values)
                ev = kit.evaluate(d)
            except kit.DesignError as err:
                assert err.parameter in words, f"refused without naming a parameter: {err}"
                return
        for name, part in ev.parts.items():
            assert part.region == KINDS[part.kind].good_region, (name, part.region)
        _no_nan(ev.to_dict())
        _no_nan(list(ev.dissipation_sweep))
        for array in (ev.points.x, ev.points.q, ev.points.di_dp):
            assert not np.isnan(array).any()

    check()


@EACH_TOPOLOGY
def test_a_reference_drifted_through_zero_is_refused_naming_its_coefficient(top):
    # A linear law X (1 + tc (T - T_ref)) carried past zero (a reference current
    # that reverses) is no point a real part reaches; the refusal names the tc.
    polarity = top.polarities[0]
    drifting = [v for v in top.values if v.name.endswith("_tc") and v.low < 0
                and 298.15 + 1 / -v.low + 1 <= 500.0]
    if not drifting:
        pytest.skip("no temperature coefficient of this topology can reach zero inside 150 … 500 K")
    for value in drifting:
        d = kit.design(top.key, polarity, temp=298.15 + 1 / -value.low + 1, **{value.name: value.low})
        with warnings.catch_warnings():
            warnings.simplefilter("error")
            with pytest.raises(kit.DesignError) as refused:
                kit.evaluate(d)
        assert refused.value.parameter == value.name, str(refused.value)


# ---------------------------------------------------------------------------------------------
# (g) the schematic shows the present values

@BOTH
def test_schematic_renders_with_the_present_values(top, polarity):
    from kit.report.schematic import render, sheet_of

    # Values changed from the defaults (by an odd factor), so a drawing with
    # numbers written into it would show here.
    changes = {v.name: v.default_for(polarity) * 1.37 for v in top.values
               if v.kind == "resistor" and v.low <= v.default_for(polarity) * 1.37 <= v.high}
    d = kit.design(top.key, polarity, **changes)
    svg = html.unescape(render(d).svg)
    assert svg.lstrip().startswith(("<svg", "<?xml"))
    sheet = sheet_of(d)
    for name in list(changes) + ["v_supply"]:
        assert sheet.text(name) in svg, (name, sheet.text(name))


# ---------------------------------------------------------------------------------------------
# (h) an example record of each topology evaluates

@functools.lru_cache(maxsize=None)
def _records():
    return tuple(load_record(path) for path in EXAMPLES)


@EACH_TOPOLOGY
def test_an_example_record_of_the_topology_evaluates(top):
    records = [r for r in _records() if r.design.topology.key == top.key]
    assert records, f"no example record in examples/ for {top.key}"
    for record in records:
        ev = kit.evaluate(record.design, edge=record.edge, network=record.thermal)  # its [thermal], if any
        assert ev.points.converged.all()
        for name, part in ev.parts.items():
            assert part.region == KINDS[part.kind].good_region, (record.source, name, part.region)
        assert ev.compliance.contains(record.design.values["v_load"])
        # a bidirectional pump's current takes the sign of its input
        assert (ev.i_out > 0 if _device_words(top) else ev.i_out != 0) and ev.r_out > 0
