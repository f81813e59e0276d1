"""Datasheet-style entry of a part: the numbers a data sheet states, turned into the kit's model.

A data sheet does not give model parameters.  It gives measured values at
stated test points — h_FE min/typ/max at an I_C and V_CE, V_BE at an I_C,
V_GS(th) at an I_D, a zener voltage with its tolerance — and ratings with
their derating.  This module converts such an entry into a
:class:`~kit.devices.base.DeviceModel` of the kit's own laws, and the
min/max spreads into ranges of model parameters that a specification
varies (``beta_f`` of a transistor, ``v_th`` of a MOSFET, ``v_z0`` of a
zener, ``v_os`` of an op-amp).

Every conversion inverts the kit's own law at the stated point, so a
design evaluated at that point gives back the stated value:

* **h_FE -> β_F.**  In the bipolar law (:mod:`kit.devices.bjt`) the base
  current carries no Early factor, so in forward active
  ``I_C/I_B = β_F (1 + V_CE/V_A)``; the conversion solves the full
  Ebers–Moll transport equations (reverse terms included) for β_F at the
  stated I_C and V_CE.  With V_A = 60 V an h_FE of 65 at 5 V is β_F = 60.
* **V_BE -> I_S.**  The collector current is linear in I_S at a given
  V_BE and V_CE, so I_S follows exactly.
* **Output conductance -> V_A.**  ``g_o = I_C/(V_A + V_CE)`` in the law
  (the hybrid-π r_o of the kit), so ``V_A = I_C/g_o - V_CE``.
* **Test temperature.**  A value stated at a temperature other than the
  design's reference is carried back to the reference by the kind's
  temperature law (I_S, β_F, V_th, k′).  Test points are taken as pulsed:
  the junction is at the stated temperature (no self-heating).
* **P_tot with linear derating** above a stated temperature to T_j(max) is
  the line ``P(T) = P_tot`` up to ``T_derate`` and ``(T_j,max - T)/θ`` above
  it with ``θ = (T_j,max - T_derate)/P_tot``; that θ is the junction-to-
  ambient resistance the kit uses when θ_JA is not stated.
* **V_GS(th) -> V_th**: the overdrive that carries the stated I_D (the
  square law, continued below its join as in :mod:`kit.devices.mosfet`) is
  taken off; K comes from a transfer point ``I_D`` at ``V_GS``, ``V_DS``
  (solved together with V_th, since each needs the other).
* **Zener / shunt reference**: ``V_Z0 = V_Z - r_z I_ZT``; the tolerance is a
  range of V_Z0; a tempco may be given in V/K or relative (1/K).
* **Op-amp**: offset, drift and bias current maxima become ranges; the
  output swing is stated as headroom to each rail and resolved at the
  design's rails; supply rejection (dB) widens the offset range by
  ``|ΔV_S| 10^(-PSRR/20)`` for supplies away from the test supply.

Entries are plain dicts of SI floats (what a record holds after its units
are read); :data:`ENTRIES` says, per kind, which entries and keys exist,
their units and ranges.

Examples
--------
A small-signal NPN with V_A = 60 V measured at h_FE = 65 at 5 V:

>>> from kit.devices import KINDS
>>> sheet = {"h_fe": {"min": 65, "typ": 65, "max": 65, "i_c": 1e-3, "v_ce": 5.0}, "v_a": 60.0}
>>> part = from_datasheet(KINDS["bjt"], "npn", sheet)
>>> round(part.model.beta_f, 3)
60.0
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from types import MappingProxyType

from kit.devices.base import BOLTZMANN_OVER_CHARGE, is_real_number
from kit.errors import ParameterError

DEFAULT_TEST_TEMPERATURE = 298.15  # K: data sheets state their tables at 25 degC unless they say otherwise

# (unit, low, high) of the keys an entry may hold.
_GAIN = ("", 1.0, 1e5)
_CURRENT = ("A", 1e-12, 100.0)
_VOLTAGE = ("V", 1e-3, 2000.0)
_TEMP = ("K", 150.0, 500.0)
_POWER = ("W", 1e-4, 1e4)
_THETA = ("K/W", 0.1, 2000.0)
_TJMAX = ("K", 300.0, 600.0)


@dataclass(frozen=True)
class Entry:
    """One datasheet entry: its keys with ``(unit, low, high)``, which are required, what it means."""

    keys: dict
    required: tuple
    meaning: str

    @property
    def scalar(self):
        """An entry with the single key ``value`` may be written as a bare number."""
        return tuple(self.keys) == ("value",)


def _value(unit_range, meaning):
    return Entry({"value": unit_range}, ("value",), meaning)


_DERATING = Entry({"value": _POWER, "t_derate": _TEMP, "t_j_max": _TJMAX}, ("value", "t_derate", "t_j_max"),
                  "P_tot, derated linearly above t_derate to zero at t_j_max")

ENTRIES = MappingProxyType({
    "bjt": MappingProxyType({
        "h_fe": Entry({"min": _GAIN, "typ": _GAIN, "max": _GAIN, "i_c": _CURRENT, "v_ce": _VOLTAGE,
                       "temp": _TEMP}, ("min", "max", "i_c", "v_ce"),
                      "DC current gain I_C/I_B at i_c, v_ce (typ: geometric mean of min and max if left out)"),
        "v_be": Entry({"value": ("V", 0.2, 1.2), "i_c": _CURRENT, "v_ce": _VOLTAGE, "temp": _TEMP},
                      ("value", "i_c", "v_ce"), "base-emitter voltage at i_c, v_ce (sets I_S)"),
        "v_ce_sat": Entry({"value": ("V", 0.0, 2.0), "i_c": _CURRENT, "forced_gain": ("", 1.0, 1e3)},
                          ("value",), "saturation voltage at i_c with I_C/I_B = forced_gain"),
        "v_a": _value(("V", 1.0, 1e4), "Early voltage"),
        "output_conductance": Entry({"value": ("S", 1e-12, 10.0), "i_c": _CURRENT, "v_ce": _VOLTAGE},
                                    ("value", "i_c", "v_ce"), "h_oe at i_c, v_ce (sets V_A)"),
        "bv_ceo": _value(("V", 1.0, 2000.0), "collector-emitter breakdown voltage"),
        "p_tot": _DERATING,
        "theta_ja": _value(_THETA, "junction-to-ambient thermal resistance"),
    }),
    "mos": MappingProxyType({
        "v_th": Entry({"min": ("V", 0.05, 10.0), "typ": ("V", 0.05, 10.0), "max": ("V", 0.05, 10.0),
                       "i_d": _CURRENT, "v_ds": _VOLTAGE, "temp": _TEMP}, ("min", "max", "i_d"),
                      "gate threshold voltage V_GS(th) at i_d (v_ds left out: V_DS = V_GS)"),
        "transfer": Entry({"i_d": _CURRENT, "v_gs": ("V", 0.1, 30.0), "v_ds": _VOLTAGE, "temp": _TEMP},
                          ("i_d", "v_gs", "v_ds"), "a point of the transfer curve in saturation (sets K)"),
        "k_prime": Entry({"min": ("A/V²", 1e-7, 1e3), "typ": ("A/V²", 1e-7, 1e3), "max": ("A/V²", 1e-7, 1e3)},
                         ("min", "max"), "process transconductance µC_ox of an integrated process"),
        "lambda_clm": _value(("1/V", 0.0, 1.0), "channel-length modulation"),
        "bv_dss": _value(("V", 1.0, 2000.0), "drain-source breakdown voltage"),
        "p_tot": _DERATING,
        "theta_ja": _value(_THETA, "junction-to-ambient thermal resistance"),
    }),
    "zener": MappingProxyType({
        "v_z": Entry({"value": ("V", 1.0, 400.0), "tolerance": ("%", 0.0, 0.5), "i_z": _CURRENT},
                     ("value", "tolerance", "i_z"), "zener or reference voltage at i_z, ± tolerance"),
        "r_z": _value(("Ω", 0.01, 1e5), "dynamic resistance at the test current"),
        "tc": Entry({"typ": ("V/K", -0.02, 0.5), "min": ("V/K", -0.02, 0.5), "max": ("V/K", -0.02, 0.5)},
                    ("typ",), "tempco of the voltage in V/K"),
        "tc_relative": Entry({"typ": ("1/K", -2e-3, 2e-3), "min": ("1/K", -2e-3, 2e-3),
                              "max": ("1/K", -2e-3, 2e-3)}, ("typ",), "tempco of the voltage per kelvin (ppm/K)"),
        "i_z_min": _value(_CURRENT, "least current for regulation"),
        "p_tot": _value(("W", 1e-3, 100.0), "dissipation limit"),
    }),
    "opamp": MappingProxyType({
        "v_os": Entry({"typ": ("V", 0.0, 0.1), "max": ("V", 0.0, 0.1)}, ("max",), "input offset voltage (magnitude)"),
        "drift": Entry({"typ": ("V/K", 0.0, 1e-4), "max": ("V/K", 0.0, 1e-4)}, ("max",), "offset drift (magnitude)"),
        "i_bias": Entry({"typ": ("A", 0.0, 1e-3), "max": ("A", 0.0, 1e-3)}, ("max",), "input bias current (magnitude)"),
        "gain": Entry({"min": ("", 1.0, 1e12), "typ": ("", 1.0, 1e12)}, ("min",), "open-loop DC gain"),
        "swing": Entry({"to_high": ("V", 0.0, 10.0), "to_low": ("V", 0.0, 10.0)}, ("to_high", "to_low"),
                       "output swing as headroom to the upper and lower rail"),
        "psrr": Entry({"min": ("", 20.0, 200.0), "v_supply": ("V", 0.1, 1000.0)}, ("min", "v_supply"),
                      "supply rejection in dB (a plain number) around the test supply"),
    }),
})


@dataclass(frozen=True)
class Derating:
    """Linear power derating: ``P_tot`` up to ``t_derate``, falling to zero at ``t_j_max``.

    Examples
    --------
    >>> line = Derating(0.5, 298.15, 423.15)
    >>> line.theta, line.allowed(298.15), line.allowed(360.65), line.allowed(423.15)
    (250.0, 0.5, 0.25, 0.0)
    """

    p_tot: float
    t_derate: float
    t_j_max: float

    def __post_init__(self):
        if not self.t_derate < self.t_j_max:
            raise ParameterError("derating must start below the highest junction temperature",
                                 parameter="p_tot.t_derate", value=self.t_derate,
                                 valid=f"< t_j_max = {self.t_j_max:g} K")

    @property
    def theta(self):
        """The thermal resistance the line implies, ``(T_j,max - T_derate)/P_tot`` in K/W."""
        return (self.t_j_max - self.t_derate) / self.p_tot

    def allowed(self, temp):
        """Allowed dissipation (W) at ambient ``temp`` (K): flat, then the derating line."""
        return float(min(self.p_tot, max(0.0, (self.t_j_max - temp) / self.theta)))


@dataclass(frozen=True)
class DatasheetPart:
    """A part converted from its datasheet entry.

    Attributes
    ----------
    model : kit.devices.base.DeviceModel
        The typical part in the kit's law.
    ranges : dict
        Model parameter -> (low, high): the stated spread in the kit's
        parameters (``beta_f``, ``v_th``, ``v_z0``, ``v_os`` ...), for a spec.
    derating : Derating or None
    notes : tuple of str
        What the conversion assumed, in words.
    """

    model: object
    ranges: dict = field(default_factory=dict)
    derating: Derating | None = None
    notes: tuple = ()


def check_entries(kind_key, sheet):
    """Validate a datasheet dict of a kind; bare numbers of scalar entries become ``{"value": x}``."""
    known = ENTRIES.get(kind_key)
    if known is None:
        raise ParameterError("no datasheet entry for this kind of part", parameter="datasheet",
                             value=kind_key, valid=", ".join(ENTRIES))
    out = {}
    for name, raw in dict(sheet).items():
        if name not in known:
            raise ParameterError("unknown datasheet entry", parameter=name, valid=", ".join(known))
        entry = known[name]
        if is_real_number(raw) and entry.scalar:
            raw = {"value": raw}
        if not isinstance(raw, (dict, MappingProxyType)):
            raise ParameterError("must be a table of " + ", ".join(entry.keys), parameter=name,
                                 value=type(raw).__name__, valid=entry.meaning)
        values = {}
        for key, number in raw.items():
            if key not in entry.keys:
                raise ParameterError("unknown key", parameter=f"{name}.{key}", valid=", ".join(entry.keys))
            unit, low, high = entry.keys[key]
            if not is_real_number(number) or not (low <= number <= high):
                raise ParameterError("out of range", parameter=f"{name}.{key}", value=number,
                                     valid=f"{low:g} … {high:g} {unit}".rstrip())
            values[key] = float(number)
        missing = [k for k in entry.required if k not in values]
        if missing:
            raise ParameterError("missing", parameter=f"{name}.{missing[0]}",
                                 valid=f"{entry.meaning}; needs " + ", ".join(entry.required))
        _check_order(name, values)
        out[name] = values
    return out


def _check_order(name, values):
    ordered = [k for k in ("min", "typ", "max") if k in values]
    for a, b in zip(ordered, ordered[1:]):
        if values[a] > values[b]:
            raise ParameterError(f"{a} above {b}", parameter=f"{name}.{a}", value=values[a],
                                 valid=f"<= {name}.{b} = {values[b]:g}")


def merge(base, changes):
    """Datasheet ``changes`` over ``base``, entry by entry and key by key (a record over a part class)."""
    def table(values):  # a scalar entry may be a bare number
        return dict(values) if isinstance(values, (dict, MappingProxyType)) else {"value": values}

    out = {name: table(values) for name, values in base.items()}
    for name, values in changes.items():
        out[name] = out.get(name, {}) | table(values)
    return out


def from_datasheet(kind, polarity, sheet, base=None, t_ref=DEFAULT_TEST_TEMPERATURE, rails=None,
                   supply_range=None, label=None):
    """Convert a datasheet entry of a part into the kit's model and parameter ranges.

    Parameters
    ----------
    kind : kit.devices.base.DeviceKind
    polarity : str
        A polarity word of the kind (``"npn"``, ``"pmos"``) or its sense.
    sheet : dict
        Entry name -> dict of SI floats (:data:`ENTRIES`); scalar entries may be bare numbers.
    base : kit.devices.base.DeviceModel, optional
        The model whose other parameters are kept (default: the kind's typical).
    t_ref : float
        The design's reference temperature in K (model parameters are given there).
    rails : (float, float), optional
        Lower and upper supply rail in V, for an op-amp's output swing.
    supply_range : (float, float), optional
        Supplies the design must work over, for an op-amp's supply rejection
        (default: the upper rail only).
    label : str, optional

    Returns
    -------
    DatasheetPart
    """
    sheet = check_entries(kind.key, sheet)
    model = base if base is not None else kind.typical(polarity)
    if model.kind is not kind or model.sense != kind.sense_of(polarity):
        raise ParameterError("base model is of another kind or polarity", parameter="base",
                             value=repr(model), valid=f"a {polarity} {kind.title}")
    convert = {"bjt": _bjt, "mos": _mos, "zener": _zener, "opamp": _opamp}[kind.key]
    changes, ranges, derating, notes = convert(model, sheet, t_ref, rails, supply_range)
    if label is not None:
        changes["label"] = label
    return DatasheetPart(model.with_values(**changes), ranges, derating, tuple(notes))


def _ratings(sheet, changes, notes, name_theta="theta_ja"):
    derating = None
    if "p_tot" in sheet:
        e = sheet["p_tot"]
        derating = Derating(e["value"], e["t_derate"], e["t_j_max"])
        changes["t_j_max"] = derating.t_j_max
        if "theta_ja" in sheet:
            stated = sheet["theta_ja"]["value"]
            # Data sheets derive the derating slope from the same θ_JA; a large
            # disagreement is a typing slip or two different mountings.
            if abs(stated - derating.theta) > 0.1 * derating.theta:
                raise ParameterError("θ_JA disagrees with the derating line", parameter="theta_ja",
                                     value=stated, valid=f"≈ {derating.theta:.4g} K/W from P_tot and its derating "
                                                         "(within 10 %), or leave one out")
        else:
            notes.append(f"θ_JA = {derating.theta:.4g} K/W from the derating line")
    if "theta_ja" in sheet:
        changes[name_theta] = sheet["theta_ja"]["value"]
    elif derating is not None:
        changes[name_theta] = derating.theta
    return derating


# --- bipolar transistor ---------------------------------------------------------------

def _bjt_temperature_factors(values, temp, t_ref):
    """``I_S(T)/I_S(T_ref)`` and ``β_F(T)/β_F(T_ref)`` of the kit's bipolar temperature law."""
    ratio = temp / t_ref
    v_t = BOLTZMANN_OVER_CHARGE * temp
    f_is = ratio ** values["i_s_temp_exponent"] * math.exp(values["e_g"] / v_t * (ratio - 1))
    f_beta = ratio ** values["beta_temp_exponent"] * (1 + values["beta_tc"] * (temp - t_ref))
    return f_is, f_beta


def saturation_current_for(v_be, i_c, v_ce, temp, values, t_ref):
    """I_S at ``t_ref`` that gives collector current ``i_c`` at ``v_be``, ``v_ce`` and ``temp``.

    The transport law is linear in I_S:
    ``I_C = I_S [e^(v_be/V_T) (1 - e^(-v_ce/V_T)) (1 + v_ce/V_A) - (e^(v_bc/V_T) - 1)/β_R]``.

    Examples
    --------
    >>> from kit.devices import KINDS
    >>> values = KINDS["bjt"].typical("npn").numbers()
    >>> f"{saturation_current_for(0.65, 1e-3, 5.0, 298.15, values, 298.15):.3e}"
    '9.807e-15'
    """
    v_t = BOLTZMANN_OVER_CHARGE * temp
    forward = math.exp(v_be / v_t)
    reverse = math.exp((v_be - v_ce) / v_t)
    per_i_s = (forward - reverse) * (1 + v_ce / values["v_a"]) - (reverse - 1) / values["beta_r"]
    f_is, _ = _bjt_temperature_factors(values, temp, t_ref)
    return i_c / per_i_s / f_is


def beta_for(h_fe, i_c, v_ce, temp, values, t_ref):
    """β_F at ``t_ref`` that gives ``I_C/I_B = h_fe`` at ``i_c``, ``v_ce`` and ``temp`` in the kit's law.

    Examples
    --------
    With V_A = 100 V, h_FE = 210 at 5 V is β_F = 210/1.05:

    >>> from kit.devices import KINDS
    >>> values = KINDS["bjt"].typical("npn").numbers()
    >>> round(beta_for(210.0, 1e-3, 5.0, 298.15, values, 298.15), 6)
    200.0
    """
    v_t = BOLTZMANN_OVER_CHARGE * temp
    f_is, f_beta = _bjt_temperature_factors(values, temp, t_ref)
    i_s, beta_r = values["i_s"] * f_is, values["beta_r"]
    e = math.exp(-v_ce / v_t)
    early = 1 + v_ce / values["v_a"]
    # I_C = I_S [x (1 - e) early - (x e - 1)/β_R] with x = exp(v_be/V_T), solved for x.
    x = (i_c / i_s - 1 / beta_r) / ((1 - e) * early - e / beta_r)
    reverse_base = i_s / beta_r * (x * e - 1)
    forward_base = i_c / h_fe - reverse_base
    if not forward_base > 0:
        raise ParameterError("h_FE too high for the part's reverse gain at this V_CE", parameter="h_fe",
                             value=h_fe, valid="a test point in forward active")
    return i_s * (x - 1) / forward_base / f_beta


def _bjt(model, sheet, t_ref, rails, supply_range):
    values = model.numbers()
    changes, ranges, notes = {}, {}, []
    if "v_a" in sheet and "output_conductance" in sheet:
        raise ParameterError("give V_A or the output conductance, not both", parameter="output_conductance",
                             valid="one of v_a, output_conductance")
    if "v_a" in sheet:
        values["v_a"] = sheet["v_a"]["value"]
    elif "output_conductance" in sheet:
        e = sheet["output_conductance"]
        v_a = e["i_c"] / e["value"] - e["v_ce"]
        if not 1.0 <= v_a <= 1e4:
            raise ParameterError("output conductance gives an Early voltage out of range",
                                 parameter="output_conductance.value", value=e["value"],
                                 valid=f"I_C/g_o - V_CE in 1 … 10000 V (here {v_a:.4g} V)")
        values["v_a"] = v_a
        notes.append(f"V_A = I_C/g_o - V_CE = {v_a:.4g} V")
    changes["v_a"] = values["v_a"]
    if "v_be" in sheet:  # before h_FE: the gain conversion uses I_S
        e = sheet["v_be"]
        values["i_s"] = saturation_current_for(e["value"], e["i_c"], e["v_ce"],
                                               e.get("temp", DEFAULT_TEST_TEMPERATURE), values, t_ref)
        changes["i_s"] = values["i_s"]
    if "h_fe" in sheet:
        e = sheet["h_fe"]
        typ = e.get("typ", math.sqrt(e["min"] * e["max"]))
        temp = e.get("temp", DEFAULT_TEST_TEMPERATURE)
        low, mid, high = (beta_for(h, e["i_c"], e["v_ce"], temp, values, t_ref) for h in (e["min"], typ, e["max"]))
        changes["beta_f"] = mid
        ranges["beta_f"] = (low, high)
        notes.append(f"h_FE {e['min']:g}/{typ:g}/{e['max']:g} at V_CE = {e['v_ce']:g} V -> "
                     f"β_F {low:.4g}/{mid:.4g}/{high:.4g}")
    if "v_ce_sat" in sheet:
        changes["v_ce_sat"] = sheet["v_ce_sat"]["value"]
    if "bv_ceo" in sheet:
        changes["bv_ceo"] = sheet["bv_ceo"]["value"]
    derating = _ratings(sheet, changes, notes)
    return changes, ranges, derating, notes


# --- MOSFET -----------------------------------------------------------------------------

def _mos(model, sheet, t_ref, rails, supply_range):
    from kit.devices.mosfet import overdrive_for_current

    values = model.numbers()
    changes, ranges, notes = {}, {}, []
    if "lambda_clm" in sheet:
        values["lambda_clm"] = changes["lambda_clm"] = sheet["lambda_clm"]["value"]
    lam = values["lambda_clm"]
    if "transfer" in sheet and "k_prime" in sheet:
        raise ParameterError("give a transfer point or k′, not both", parameter="transfer",
                             valid="one of transfer, k_prime")

    def at(temp):  # K and the V_th shift at the test temperature
        ratio = temp / t_ref
        return values["w_over_l"] * ratio ** (-values["mu_exp"]), values["tc_vth"] * (temp - t_ref)

    def threshold(v_gs_th, k_prime, e):
        """V_th at t_ref from V_GS(th) at i_d: the overdrive that carries i_d taken off."""
        temp = e.get("temp", DEFAULT_TEST_TEMPERATURE)
        scale, shift = at(temp)
        join = 2 * values["n_sub"] * BOLTZMANN_OVER_CHARGE * temp
        v_ds = e.get("v_ds", v_gs_th)
        overdrive = float(overdrive_for_current(e["i_d"], v_ds, k_prime * scale, lam, join))
        return v_gs_th - overdrive - shift

    if "k_prime" in sheet:
        e = sheet["k_prime"]
        values["k_prime"] = e.get("typ", math.sqrt(e["min"] * e["max"]))
        ranges["k_prime"] = (e["min"], e["max"])
    th = sheet.get("v_th")
    typ_th = None if th is None else th.get("typ", (th["min"] + th["max"]) / 2)
    if "transfer" in sheet:
        t = sheet["transfer"]
        scale, shift = at(t.get("temp", DEFAULT_TEST_TEMPERATURE))
        k_prime = values["k_prime"]
        v_th = values["v_th"]
        for _ in range(200):  # K and V_th each need the other; the threshold's overdrive is small
            if th is not None:
                v_th = threshold(typ_th, k_prime, th)
            overdrive = t["v_gs"] - v_th - shift
            if not overdrive > 0 or t["v_ds"] < overdrive:
                raise ParameterError("transfer point not in saturation above threshold", parameter="transfer.v_gs",
                                     value=t["v_gs"], valid=f"V_th < V_GS <= V_DS + V_th (V_th ≈ {v_th + shift:.3g} V)")
            new = 2 * t["i_d"] / (overdrive ** 2 * (1 + lam * t["v_ds"])) / scale
            if abs(new - k_prime) <= 1e-12 * new:
                k_prime = new
                break
            k_prime = new
        else:
            raise ParameterError("transfer point and threshold do not agree", parameter="transfer",
                                 valid="a transfer point well above the threshold test current")
        values["k_prime"] = k_prime
        notes.append(f"K = {k_prime * values['w_over_l']:.4g} A/V² from the transfer point")
    if "transfer" in sheet or "k_prime" in sheet:
        changes["k_prime"] = values["k_prime"]
    if th is not None:
        low, mid, high = (threshold(v, values["k_prime"], th) for v in (th["min"], typ_th, th["max"]))
        for v in (low, mid, high):
            if not 0.05 <= v <= 10.0:
                raise ParameterError("threshold test point gives a V_th out of range", parameter="v_th",
                                     value=v, valid="0.05 … 10 V")
        changes["v_th"], ranges["v_th"] = mid, (low, high)
    if "bv_dss" in sheet:
        changes["bv_dss"] = sheet["bv_dss"]["value"]
    derating = _ratings(sheet, changes, notes)
    return changes, ranges, derating, notes


# --- zener and shunt reference -----------------------------------------------------------

def _zener(model, sheet, t_ref, rails, supply_range):
    changes, ranges, notes = {}, {}, []
    r_z = sheet["r_z"]["value"] if "r_z" in sheet else model.r_z
    if "r_z" in sheet:
        changes["r_z"] = r_z
    if "tc" in sheet and "tc_relative" in sheet:
        raise ParameterError("give the tempco in V/K or relative, not both", parameter="tc_relative",
                             valid="one of tc, tc_relative")
    if "v_z" in sheet:
        e = sheet["v_z"]
        drop = r_z * e["i_z"]
        changes["v_z0"] = e["value"] - drop
        ranges["v_z0"] = (e["value"] * (1 - e["tolerance"]) - drop, e["value"] * (1 + e["tolerance"]) - drop)
        notes.append(f"V_Z0 = V_Z - r_z I_ZT = {changes['v_z0']:.4g} V")
    v_z = sheet["v_z"]["value"] if "v_z" in sheet else model.v_z0
    for name, scale in (("tc", 1.0), ("tc_relative", v_z)):
        if name in sheet:
            e = sheet[name]
            changes["tc_z"] = e["typ"] * scale
            if "min" in e or "max" in e:
                ranges["tc_z"] = (e.get("min", e["typ"]) * scale, e.get("max", e["typ"]) * scale)
    if "i_z_min" in sheet:
        changes["i_z_min"] = sheet["i_z_min"]["value"]
    if "p_tot" in sheet:
        changes["p_z_max"] = sheet["p_tot"]["value"]
    return changes, ranges, None, notes


# --- op-amp --------------------------------------------------------------------------------

def _opamp(model, sheet, t_ref, rails, supply_range):
    changes, ranges, notes = {}, {}, []
    widen = 0.0
    if "psrr" in sheet:
        e = sheet["psrr"]
        supplies = supply_range or ((rails[1],) * 2 if rails else None)
        if supplies is None:
            raise ParameterError("supply rejection needs the design's supply", parameter="psrr",
                                 valid="give the rails (the design's supply)")
        widen = max(abs(s - e["v_supply"]) for s in supplies) * 10 ** (-e["min"] / 20)
        notes.append(f"supply rejection widens the offset by {widen:.3g} V over the supply range")
    for name, param in (("v_os", "v_os"), ("drift", "v_os_tc"), ("i_bias", "i_bias")):
        if name in sheet:
            e = sheet[name]
            extra = widen if name == "v_os" else 0.0
            changes[param] = e.get("typ", 0.0)
            ranges[param] = (-e["max"] - extra, e["max"] + extra)
    if "gain" in sheet:
        e = sheet["gain"]
        changes["a_ol"] = e.get("typ", e["min"])
        ranges["a_ol"] = (e["min"], changes["a_ol"])
    if "swing" in sheet:
        if rails is None:
            raise ParameterError("the output swing is stated against the rails", parameter="swing",
                                 valid="give the rails (the design's supply)")
        e = sheet["swing"]
        low, high = rails[0] + e["to_low"], rails[1] - e["to_high"]
        if not low < high:
            raise ParameterError("no output swing left between the rails", parameter="swing",
                                 value=f"{rails[0]:g} … {rails[1]:g} V",
                                 valid=f"rails more than {e['to_low'] + e['to_high']:g} V apart")
        changes["v_ol"], changes["v_oh"] = low, high
        notes.append(f"output swing {low:.4g} … {high:.4g} V at rails {rails[0]:g} … {rails[1]:g} V")
    return changes, ranges, None, notes
