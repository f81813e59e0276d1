"""Bipolar transistor: large-signal DC model and its temperature laws.

The model is the Ebers–Moll transport form with a forward Early factor on
the transport current only (Ebers & Moll, Proc. IRE 42, 1954; Early,
Proc. IRE 40, 1952).  Written for an NPN with voltages normalised so that
forward bias is positive (``v_be = V_B - V_E`` for NPN, ``V_E - V_B`` for
PNP)::

    i_cc = I_S (exp(v_be/V_T) - exp(v_bc/V_T)) (1 + v_ce/V_A)
    i_c  = i_cc - (I_S/beta_R) (exp(v_bc/V_T) - 1)
    i_b  = (I_S/beta_F) (exp(v_be/V_T) - 1) + (I_S/beta_R) (exp(v_bc/V_T) - 1)

The base current carries no Early factor, so the measured gain
``I_C/I_B = beta_F (1 + V_CE/V_A)`` in forward active differs from the
model parameter ``beta_F``; the kit reports both.

Temperature laws (Getreu, *Modeling the Bipolar Transistor*, 1976;
Gummel–Poon temperature scaling, from memory)::

    V_T(T)    = k T / q
    I_S(T)    = I_S(T0) (T/T0)^XTI exp[(q E_g / k)(1/T0 - 1/T)]
    beta_F(T) = beta_F(T0) (T/T0)^XTB (1 + TC_beta (T - T0))

The beta law is a power law times a linear factor: set ``xtb = 0`` for the
purely linear %/K form or ``beta_tc = 0`` (the default) for the power law.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from kit.devices.common import ModelValues
from kit.errors import ParameterError

# k and e are exact by definition in the 2019 SI (CODATA 2018); written out so
# that importing the device laws does not import SciPy (tests compare them
# with scipy.constants).
BOLTZMANN = 1.380649e-23  # J/K
ELEMENTARY_CHARGE = 1.602176634e-19  # C
BOLTZMANN_OVER_CHARGE = BOLTZMANN / ELEMENTARY_CHARGE  # V/K

# A junction with less than this many thermal voltages of forward bias counts
# as not forward biased (for telling reverse operation apart).  A transistor
# is cut off when its collector current is below CUTOFF_CURRENT: a voltage
# criterion alone would call a hot, large part cut off while it conducts.
CUTOFF_THERMAL_VOLTAGES = 8.0
CUTOFF_CURRENT = 1e-10  # A


def thermal_voltage(temp):
    """Thermal voltage ``k T / q`` in volts.

    Examples
    --------
    >>> round(thermal_voltage(300.15) * 1e3, 4)
    25.8649
    """
    return BOLTZMANN_OVER_CHARGE * temp


@dataclass(frozen=True)
class BJTModel(ModelValues):
    """Parameters of one transistor, given at the design's reference temperature.

    Parameters
    ----------
    polarity : {"npn", "pnp"}
    i_s : float
        Transport saturation current in A.
    beta_f : float
        Forward current gain *model parameter* (not the measured I_C/I_B).
    beta_r : float
        Reverse current gain; matters only near saturation.
    v_a : float
        Forward Early voltage in V (``math.inf`` for none).
    e_g : float
        Activation energy of I_S in eV (fitted together with ``xti``).
    xti : float
        Temperature exponent of I_S.
    xtb : float
        Temperature exponent of beta_F (power law).
    beta_tc : float
        Linear temperature coefficient of beta_F in 1/K.
    v_ce_sat : float
        Collector–emitter voltage, in V, below which the part counts as
        saturated for compliance (a datasheet-style value that includes
        collector resistance, not the Ebers–Moll knee).
    bv_ceo : float
        Collector–emitter breakdown voltage in V (upper compliance limit).
    theta_ja : float
        Junction-to-ambient thermal resistance in K/W.
    t_j_max : float
        Maximum junction temperature in K.
    label : str
        Where the numbers come from, shown in every report.

    Examples
    --------
    >>> TYPICAL_NPN.beta_f
    200.0
    >>> TYPICAL_NPN.with_values(beta_f=120).beta_f
    120.0
    """

    polarity: str = "npn"
    i_s: float = 1e-14
    beta_f: float = 200.0
    beta_r: float = 2.0
    v_a: float = 100.0
    e_g: float = 1.11
    xti: float = 3.0
    xtb: float = 1.5
    beta_tc: float = 0.0
    v_ce_sat: float = 0.2
    bv_ceo: float = 40.0
    theta_ja: float = 250.0
    t_j_max: float = 423.15
    label: str = "typical small-signal NPN (generic values from memory, not a part's data)"

    def __post_init__(self):
        if self.polarity not in ("npn", "pnp"):
            raise ParameterError("unknown transistor polarity", parameter="polarity",
                                 value=self.polarity, valid="npn or pnp")
        for name, (low, high, unit) in MODEL_LIMITS.items():
            value = getattr(self, name)
            check_range(name, value, low, high, unit, allow_inf=(name == "v_a"))
            object.__setattr__(self, name, float(value))  # 120 and 120.0 are the same part



# name: (lowest, highest, unit) -- wide enough for any real part, narrow
# enough to catch a unit slip (a beta of 2e5, an I_S of 1 A).
MODEL_LIMITS = {
    "i_s": (1e-22, 1e-6, "A"),
    "beta_f": (1.0, 1e5, ""),
    "beta_r": (0.01, 1e3, ""),
    "v_a": (1.0, 1e4, "V"),
    "e_g": (0.5, 2.0, "eV"),
    "xti": (-10.0, 10.0, ""),
    "xtb": (-5.0, 5.0, ""),
    "beta_tc": (-0.05, 0.05, "1/K"),
    "v_ce_sat": (0.0, 2.0, "V"),
    "bv_ceo": (1.0, 2000.0, "V"),
    "theta_ja": (0.1, 2000.0, "K/W"),
    "t_j_max": (300.0, 600.0, "K"),
}


BJTModel.LIMITS = MODEL_LIMITS
BJTModel.WHAT = "transistor"


def check_range(name, value, low, high, unit="", *, allow_inf=False):
    """Raise :class:`ParameterError` unless ``low <= value <= high``.

    Examples
    --------
    >>> check_range("beta_f", 150.0, 1.0, 1e5)
    >>> check_range("beta_f", -3.0, 1.0, 1e5)
    Traceback (most recent call last):
    ...
    kit.errors.ParameterError: beta_f = -3.0: out of range (valid: 1 … 100000)
    """
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise ParameterError("must be a number", parameter=name, value=value,
                             valid=f"{low:g} … {high:g} {unit}".rstrip())
    if allow_inf and value == math.inf:
        return
    if not (low <= value <= high):  # also false for NaN
        raise ParameterError("out of range", parameter=name, value=value,
                             valid=f"{low:g} … {high:g} {unit}".rstrip())


TYPICAL_NPN = BJTModel()
TYPICAL_PNP = BJTModel(
    polarity="pnp", beta_f=150.0, v_a=50.0, v_ce_sat=0.25,
    label="typical small-signal PNP (generic values from memory, not a part's data)",
)


def typical(polarity):
    """The generic typical model of a polarity."""
    return TYPICAL_NPN if polarity == "npn" else TYPICAL_PNP


# --- what the solver and the compliance search need to know of this kind

KIND = "bjt"
MODEL = BJTModel
QUANTITIES = ("v_be", "v_bc", "v_ce", "i_c", "i_b")
STEP_LIMITED = ("v_be", "v_bc")  # junction voltages whose Newton step is limited
EQUATION_PARAMETERS = ("i_s", "beta_f", "beta_r", "v_a", "e_g", "xti", "xtb", "beta_tc")
GOOD_REGION = "active"
SENSITIVITY_PARAMETERS = {"beta_f": "", "v_a": "V"}  # reported per device, with units
# Operating-symbol prefixes -> what the tempco budget calls them.
BUDGET_LABELS = {"V_T_": "thermal voltage V_T", "I_S_": "saturation current I_S", "betaR_": "reverse gain β_R",
                 "beta_": "current gain β_F", "V_A_": "Early voltage V_A"}


CAUSE_TEXT = {"saturation": "saturates", "cutoff": "cuts off", "breakdown": "reaches BV_CEO",
              "power": "reaches its dissipation limit"}
LATEX_PREFIXES = {}  # the kit's own names (beta_, I_S_, V_A_) are known to kit.derive


def describe(values):
    """One line of a solved transistor for plain-text reports.

    Examples
    --------
    >>> describe({"v_be": 0.648, "v_ce": 5.89, "i_c": 9.5e-4, "i_b": 4.5e-6})
    'V_BE 648 mV, V_CE 5.89 V, I_C 950 µA, I_C/I_B 211.1'
    """
    from kit.quantities import format_quantity

    return (f"V_BE {format_quantity(values['v_be'], 'V', 4)}, V_CE {format_quantity(values['v_ce'], 'V')}, "
            f"I_C {format_quantity(values['i_c'], 'A')}, I_C/I_B {values['i_c'] / values['i_b']:.1f}")


def dissipation(j):
    """Power in W: ``V_CE I_C + V_BE I_B``."""
    return j["v_ce"] * j["i_c"] + j["v_be"] * j["i_b"]


def regions(j, v_t, device, edge="vce_sat"):
    """Region names (``active``, ``saturated``, ``cutoff``, ``reverse``) of solved points.

    ``edge`` is ``"vce_sat"`` (saturated below the model's ``v_ce_sat``) or
    ``"vcb_zero"`` (saturated once the collector-base junction is forward biased).
    """
    import numpy as np

    off = CUTOFF_THERMAL_VOLTAGES * v_t
    saturated = j["v_ce"] < device.v_ce_sat if edge == "vce_sat" else j["v_bc"] > 0.0
    region = np.where(saturated, "saturated", "active").astype(object)
    region[(j["v_be"] < off) & (j["v_bc"] >= off)] = "reverse"
    region[(j["v_bc"] < off) & (j["i_c"] < CUTOFF_CURRENT)] = "cutoff"
    return region


def _cutoff_margin(j, v_t):
    import numpy as np

    # The current criterion as a voltage, V_T ln(I_C / I_cutoff): continuous for I_C > 0.
    # A forward-biased collector junction means saturation, not cut-off (the
    # collector current of a hard-saturated part is small too).
    by_current = v_t * np.log(np.maximum(j["i_c"], 1e-300) / CUTOFF_CURRENT)
    return np.where(j["v_bc"] >= CUTOFF_THERMAL_VOLTAGES * v_t, np.inf, by_current)


def margins(j, v_t, temp, device, edge="vce_sat"):
    """Distance to each limit of forward-active operation (>= 0 inside), by cause.

    Causes: ``saturation`` (V), ``cutoff`` (V), ``breakdown`` (V) and
    ``power`` (W, against ``(T_J,max - T)/theta_JA`` at temperature ``temp``).
    """
    import numpy as np

    if edge == "vce_sat":
        saturation = j["v_ce"] - device.v_ce_sat
    else:
        # A diode-connected transistor has V_CB = 0 by its wiring: never a limit.
        saturation = np.where(j["v_bc"] == 0.0, np.inf, -j["v_bc"])
    return {
        "saturation": saturation,
        "cutoff": _cutoff_margin(j, v_t),  # see CUTOFF_CURRENT
        "breakdown": device.bv_ceo - j["v_ce"],
        "power": (device.t_j_max - temp) / device.theta_ja - dissipation(j),
    }


# --- symbolic laws (SymPy imported lazily: the numeric path does not need it)

def operating_symbols(name):
    """SymPy symbols of a transistor's parameters at the operating temperature."""
    import sympy as sp

    return {
        "I_S": sp.Symbol(f"I_S_{name}", positive=True),
        "beta": sp.Symbol(f"beta_{name}", positive=True),
        "beta_R": sp.Symbol(f"betaR_{name}", positive=True),
        "V_A": sp.Symbol(f"V_A_{name}", positive=True),
        "V_T": sp.Symbol(f"V_T_{name}", positive=True),
    }


def temperature_map(name, temp, t_ref, area=1):
    """Operating-temperature parameters of transistor ``name`` from its reference values.

    The junction sits at ``temp + {name}.t_rise``: the rise above the
    temperature of the point is zero unless self-heating or a thermal
    gradient is being studied.  Returns ``(map, reference_symbols)`` where
    ``map`` sends each operating symbol (see :func:`operating_symbols`) to an
    expression in the reference symbols ``{name}.i_s`` etc., ``temp`` and ``t_ref``.
    """
    import sympy as sp

    ref = {key: sp.Symbol(f"{name}.{key}", real=True) for key in
           ("i_s", "beta_f", "beta_r", "v_a", "e_g", "xti", "xtb", "beta_tc", "t_rise")}
    op = operating_symbols(name)
    junction = temp + ref["t_rise"]
    v_t = BOLTZMANN_OVER_CHARGE * junction
    ratio = junction / t_ref
    mapping = {
        op["V_T"]: v_t,
        op["I_S"]: area * ref["i_s"] * ratio ** ref["xti"]
        * sp.exp(ref["e_g"] / v_t * (ratio - 1)),
        op["beta"]: ref["beta_f"] * ratio ** ref["xtb"] * (1 + ref["beta_tc"] * (junction - t_ref)),
        op["beta_R"]: ref["beta_r"],
        op["V_A"]: ref["v_a"],
    }
    return mapping, ref


def junction_laws(polarity, v_b, v_c, v_e, symbols, v_t):
    """Ebers–Moll currents into the terminals of one transistor.

    Parameters
    ----------
    polarity : {"npn", "pnp"}
    v_b, v_c, v_e : sympy expressions
        Node voltages of base, collector and emitter.
    symbols : dict
        Output of :func:`operating_symbols`.
    v_t : sympy expression
        Thermal voltage.

    Returns
    -------
    dict
        ``into_c``, ``into_b``, ``into_e`` (signed currents into the terminals)
        and the normalised ``v_be``, ``v_bc``, ``v_ce``, ``i_c``, ``i_b``
        (forward-active positive for either polarity).
    """
    import sympy as sp

    sign = 1 if polarity == "npn" else -1
    v_be = sign * (v_b - v_e)
    v_bc = sign * (v_b - v_c)
    v_ce = v_be - v_bc
    i_s, beta, beta_r, v_a = (symbols[k] for k in ("I_S", "beta", "beta_R", "V_A"))
    forward = sp.exp(v_be / v_t)
    reverse = sp.exp(v_bc / v_t)
    transport = i_s * (forward - reverse) * (1 + v_ce / v_a)
    i_c = transport - i_s / beta_r * (reverse - 1)
    i_b = i_s / beta * (forward - 1) + i_s / beta_r * (reverse - 1)
    return {
        "into_c": sign * i_c,
        "into_b": sign * i_b,
        "into_e": -sign * (i_c + i_b),
        "v_be": v_be, "v_bc": v_bc, "v_ce": v_ce, "i_c": i_c, "i_b": i_b,
    }
