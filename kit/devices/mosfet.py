"""Enhancement MOSFET: square-law DC model with channel-length modulation.

Written for an NMOS with voltages normalised so that conduction is positive
(``v_gs = V_G - V_S`` for NMOS, ``V_S - V_G`` for PMOS; likewise ``v_ds``),
with the transconductance parameter ``K = k' (W/L)`` and the overdrive
``v_ov = v_gs - V_th``::

    saturation (v_ds >= v_ov):  i_d = (K/2) v_ov^2 (1 + lambda v_ds)
    triode     (v_ds <  v_ov):  i_d = K (v_ov v_ds - v_ds^2/2) (1 + lambda v_ds)

(Sedra & Smith, *Microelectronic Circuits*, MOSFET chapter; Razavi, *Design
of Analog CMOS Integrated Circuits*, ch. 2 -- from memory.)  Carrying the
factor ``1 + lambda v_ds`` in triode too makes ``i_d`` and its slope
continuous at ``v_ds = v_ov``.  The gate draws no DC current; the body is
tied to the source (no body effect).  The channel is symmetric: for
``v_ds < 0`` drain and source swap roles, ``i_d(v_gs, v_ds) = -i_d(v_gd, -v_ds)``.

Below threshold the square law gives zero current and zero slope, which
leaves Newton's method without a direction and makes a diode-connected
device's Jacobian singular.  The kit therefore continues the law smoothly
below the join ``V_J = 2 n V_T`` of overdrive: there the current is the
square law *at* the join times an exponential in the overdrive::

    i_d = i_square(V_J, v_ds) exp(2 (v_ov - V_J)/V_J)
        = i_square(V_J, v_ds) exp((v_ov - V_J)/(n V_T))

so it falls as ``exp(v_gs/(n V_T))``, the weak-inversion slope with slope
factor ``n`` (Tsividis, *Operation and Modeling of the MOS Transistor*, from
memory).  ``V_J`` is where the square law's ``g_m/I_D = 2/v_ov`` equals that
slope, so in saturation current and ``g_m`` are continuous across the join
(in triode only the current: ``g_m`` steps there, outside any good region).
Below the join the channel saturates at ``v_ds = V_J``, a few V_T as weak
inversion does.  The square law is exact above ``V_J`` (about 78 mV of
overdrive at 25 degC with n = 1.5); below, the current is a qualitative
continuation, and the kit calls the device *cut off* as soon as
``v_gs < V_th``: a design is never accepted on the continuation.

Temperature laws (mobility and threshold; Sedra & Smith and Razavi, from
memory; exponent 1.2 ... 2, threshold slope -1 ... -4 mV/K)::

    k'(T)   = k'(T0) (T/T0)^(-mu_exp)
    V_th(T) = V_th(T0) + tc_vth (T - T0)

with ``T`` the channel temperature, ``temp + t_rise`` (self-heating), as for
a BJT junction; lambda does not change with temperature in this model.

Polarity uses the kit's design words: an NMOS is a ``"npn"``-polarity
device (it sinks), a PMOS a ``"pnp"`` one (it sources); ``"nmos"`` and
``"pmos"`` are accepted and stored as those.
"""

from __future__ import annotations

from dataclasses import dataclass

from kit.devices.bjt import BOLTZMANN_OVER_CHARGE, check_range
from kit.devices.common import ModelValues
from kit.errors import ParameterError

# Channel words <-> the kit's design-polarity words.
POLARITY_WORDS = {"npn": "nmos", "pnp": "pmos"}
_ACCEPTED = {"npn": "npn", "nmos": "npn", "pnp": "pnp", "pmos": "pnp"}


@dataclass(frozen=True)
class MOSFETModel(ModelValues):
    """Parameters of one enhancement MOSFET, given at the reference temperature.

    All voltages are magnitudes in the conducting sense (a PMOS threshold of
    2 V is written ``v_th=2.0``).

    Parameters
    ----------
    polarity : {"npn", "pnp"} (or "nmos", "pmos")
        ``"npn"`` for an NMOS (sink), ``"pnp"`` for a PMOS (source).
    k_prime : float
        Process transconductance ``mu C_ox`` in A/V^2.  For a discrete part,
        whose W/L is not published, give the part's ``K = k' W/L`` here and
        leave ``w_over_l = 1``.
    w_over_l : float
        Channel width over length (a topology may scale it further, as a
        mirror's ratio does).
    v_th : float
        Threshold voltage magnitude in V (enhancement mode, > 0).
    lambda_clm : float
        Channel-length modulation coefficient in 1/V (0 for none).
    mu_exp : float
        Mobility temperature exponent: ``k' ∝ T^(-mu_exp)``.
    tc_vth : float
        Threshold temperature slope in V/K (negative for real parts).
    n_sub : float
        Weak-inversion slope factor of the subthreshold continuation.
    bv_dss : float
        Drain-source breakdown voltage in V (upper compliance limit).
    theta_ja : float
        Junction-to-ambient thermal resistance in K/W.
    t_j_max : float
        Maximum junction temperature in K.
    label : str
        Where the numbers come from, shown in every report.

    Examples
    --------
    >>> TYPICAL_NMOS.v_th
    2.0
    >>> MOSFETModel(polarity="pmos").polarity
    'pnp'
    >>> TYPICAL_NMOS.with_values(lambda_clm=0.0).lambda_clm
    0.0
    """

    polarity: str = "npn"
    k_prime: float = 0.2
    w_over_l: float = 1.0
    v_th: float = 2.0
    lambda_clm: float = 0.01
    mu_exp: float = 1.5
    tc_vth: float = -2e-3
    n_sub: float = 1.5
    bv_dss: float = 60.0
    theta_ja: float = 350.0
    t_j_max: float = 423.15
    label: str = "typical discrete small-signal NMOS (generic values from memory, not a part's data)"

    def __post_init__(self):
        if self.polarity not in _ACCEPTED:
            raise ParameterError("unknown MOSFET polarity", parameter="polarity",
                                 value=self.polarity, valid="npn (NMOS) or pnp (PMOS)")
        object.__setattr__(self, "polarity", _ACCEPTED[self.polarity])
        for name, (low, high, unit) in MODEL_LIMITS.items():
            check_range(name, getattr(self, name), low, high, unit)
        if not isinstance(self.label, str):
            raise ParameterError("must be text", parameter="label", value=self.label)

    @property
    def channel(self):
        """``"nmos"`` or ``"pmos"``."""
        return POLARITY_WORDS[self.polarity]

    @property
    def k(self):
        """Transconductance parameter ``K = k' W/L`` in A/V^2 at the reference temperature."""
        return self.k_prime * self.w_over_l

    @property
    def bv_ceo(self):
        """Breakdown voltage under the name the compliance search reads for every kind (= ``bv_dss``)."""
        return self.bv_dss



# name: (lowest, highest, unit) -- wide enough for integrated and discrete
# parts, narrow enough to catch a unit slip (a k' of 200 for 200 uA/V^2).
MODEL_LIMITS = {
    "k_prime": (1e-7, 1e3, "A/V²"),
    "w_over_l": (1e-3, 1e6, ""),
    "v_th": (0.05, 10.0, "V"),
    "lambda_clm": (0.0, 1.0, "1/V"),
    "mu_exp": (0.0, 3.0, ""),
    "tc_vth": (-10e-3, 5e-3, "V/K"),
    "n_sub": (1.0, 3.0, ""),
    "bv_dss": (1.0, 2000.0, "V"),
    "theta_ja": (0.1, 2000.0, "K/W"),
    "t_j_max": (300.0, 600.0, "K"),
}

MOSFETModel.LIMITS = MODEL_LIMITS
MOSFETModel.WHAT = "MOSFET"

TYPICAL_NMOS = MOSFETModel()
TYPICAL_PMOS = MOSFETModel(
    polarity="pnp", k_prime=0.1, lambda_clm=0.02, bv_dss=50.0,
    label="typical discrete small-signal PMOS (generic values from memory, not a part's data)",
)


def typical(polarity):
    """The generic typical model of a design polarity (``"npn"`` -> NMOS, ``"pnp"`` -> PMOS).

    Examples
    --------
    >>> typical("pnp").channel
    'pmos'
    """
    return TYPICAL_NMOS if _ACCEPTED.get(polarity) == "npn" else TYPICAL_PMOS


# --- what the solver and the compliance search need to know of this kind

KIND = "mos"
MODEL = MOSFETModel
QUANTITIES = ("v_gs", "v_ds", "v_gd", "v_ov", "v_dsat", "i_d")
STEP_LIMITED = ()  # no exponential above the join, so no junction-style step limit is needed
EQUATION_PARAMETERS = ("k_prime", "w_over_l", "v_th", "lambda_clm", "mu_exp", "tc_vth", "n_sub")
GOOD_REGION = "saturation"
SENSITIVITY_PARAMETERS = {"k_prime": "A/V²", "v_th": "V", "lambda_clm": "1/V"}
# Operating-symbol prefixes -> what the tempco budget calls them.
BUDGET_LABELS = {"K_": "transconductance K = k′W/L (mobility)", "Vth_": "threshold voltage V_th",
                 "lambda_": "channel-length modulation λ", "nsub_": "weak-inversion slope n"}
# Words for the compliance report (the shared table speaks of BJTs).
CAUSE_TEXT = {"triode": "leaves saturation (triode)", "cutoff": "falls below threshold",
              "breakdown": "reaches BV_DSS", "power": "reaches its dissipation limit"}
# Operating-symbol prefixes -> LaTeX (for kit.derive.latex_name).
LATEX_PREFIXES = {"K_": "K", "Vth_": "V_{th", "lambda_": r"\lambda", "nsub_": "n"}


def dissipation(j):
    """Power in W: ``V_DS I_D`` (no gate current)."""
    return j["v_ds"] * j["i_d"]


def regions(j, v_t, device, edge="vce_sat"):
    """Region names (``saturation``, ``triode``, ``cutoff``) of solved points.

    ``cutoff`` below threshold (``v_ov < 0``), ``triode`` below the
    saturation voltage ``v_dsat`` (= ``v_ov`` above the join), else
    ``saturation``.  ``edge`` (a BJT criterion) does not apply and is ignored.
    """
    import numpy as np

    region = np.where(j["v_ds"] < j["v_dsat"], "triode", "saturation").astype(object)
    region[j["v_ov"] < 0] = "cutoff"
    return region


def margins(j, v_t, temp, device, edge="vce_sat"):
    """Distance to each limit of saturation operation (>= 0 inside), by cause.

    Causes: ``triode`` (V, ``v_ds - v_dsat``), ``cutoff`` (V, the overdrive),
    ``breakdown`` (V, against ``bv_dss``) and ``power`` (W, against
    ``(T_J,max - T)/theta_JA`` at temperature ``temp``).
    """
    return {
        "triode": j["v_ds"] - j["v_dsat"],
        "cutoff": j["v_ov"],
        "breakdown": device.bv_dss - j["v_ds"],
        "power": (device.t_j_max - temp) / device.theta_ja - dissipation(j),
    }


def describe(values):
    """One line of a solved device for plain-text reports.

    Examples
    --------
    >>> describe({"v_gs": 2.5, "v_ds": 8.0, "v_ov": 0.5, "i_d": 0.01})
    'V_GS 2.500 V, V_DS 8.000 V, V_ov 0.500 V, I_D 10 mA'
    """
    from kit.quantities import format_quantity

    return (f"V_GS {values['v_gs']:.3f} V, V_DS {values['v_ds']:.3f} V, "
            f"V_ov {values['v_ov']:.3f} V, I_D {format_quantity(values['i_d'], 'A', 4)}")


def overdrive_for_current(current, v_ds, k, lam, join, smallest_v_ds=1e-3):
    """Overdrive ``v_gs - V_th`` that carries ``current`` at ``v_ds`` (the law inverted).

    Saturation when ``v_ds`` exceeds the saturation voltage, else the triode
    law solved for the overdrive; below the join the exponential
    continuation is inverted.  NumPy arrays in and out; for starting points
    of the exact solve (``v_ds`` below ``smallest_v_ds`` is raised to it).

    Examples
    --------
    >>> round(float(overdrive_for_current(0.01, 5.0, 0.2, 0.0, 0.078)), 6)
    0.316228
    >>> round(float(overdrive_for_current(0.2 / 2 * 0.078**2, 5.0, 0.2, 0.0, 0.078)), 6)
    0.078
    """
    import numpy as np

    v = np.maximum(v_ds, smallest_v_ds)
    clm = 1 + lam * v
    saturated = np.sqrt(2 * current / (k * clm))
    triode = current / (k * v * clm) + v / 2
    strong = np.where(v >= saturated, saturated, triode)
    at_join = k * clm * np.where(v < join, join * v - v ** 2 / 2, join ** 2 / 2)
    weak = join + join / 2 * np.log(np.maximum(current, 1e-300) / at_join)
    return np.where(strong >= join, strong, weak)


# --- symbolic laws (SymPy imported lazily: the numeric path does not need it)

def operating_symbols(name):
    """SymPy symbols of a MOSFET's parameters at the operating temperature."""
    import sympy as sp

    return {
        "K": sp.Symbol(f"K_{name}", positive=True),
        "V_th": sp.Symbol(f"Vth_{name}", real=True),
        "lambda": sp.Symbol(f"lambda_{name}", nonnegative=True),
        "n": sp.Symbol(f"nsub_{name}", positive=True),
        "V_T": sp.Symbol(f"V_T_{name}", positive=True),
    }


def temperature_map(name, temp, t_ref, scale=1):
    """Operating-temperature parameters of MOSFET ``name`` from its reference values.

    The channel sits at ``temp + {name}.t_rise`` (self-heating, thermal
    gradients), as a BJT junction does.  ``scale`` multiplies W/L (a mirror
    ratio: a number or a parameter symbol).  Returns ``(map, reference_symbols)``
    like :func:`kit.devices.bjt.temperature_map`.
    """
    import sympy as sp

    ref = {key: sp.Symbol(f"{name}.{key}", real=True) for key in (*EQUATION_PARAMETERS, "t_rise")}
    op = operating_symbols(name)
    channel = temp + ref["t_rise"]
    mapping = {
        op["K"]: scale * ref["w_over_l"] * ref["k_prime"] * (channel / t_ref) ** (-ref["mu_exp"]),
        op["V_th"]: ref["v_th"] + ref["tc_vth"] * (channel - t_ref),
        op["lambda"]: ref["lambda_clm"],
        op["n"]: ref["n_sub"],
        op["V_T"]: BOLTZMANN_OVER_CHARGE * channel,
    }
    return mapping, ref


def effective_overdrive(v_ov, join):
    """The saturation voltage: ``v_ov`` above ``join``, ``join`` below it."""
    import sympy as sp

    return sp.Piecewise((v_ov, v_ov >= join), (join, True))


def _square(k, x, v_ds, lam):
    """Square law at overdrive ``x`` for ``v_ds >= 0``: triode below ``x``, saturation above."""
    import sympy as sp

    return k * (1 + lam * v_ds) * sp.Piecewise((x * v_ds - v_ds ** 2 / 2, v_ds < x), (x ** 2 / 2, True))


def forward_current(k, v_ov, v_ds, lam, join):
    """Drain current for ``v_ds >= 0``: the square law, continued below ``v_ov = join``.

    Below the join the law is the square law *at* the join times
    ``exp(2 (v_ov - join)/join)``.  Every condition compares plain expressions
    (never a Piecewise), so the generated code selects with boolean arrays.
    """
    import sympy as sp

    return sp.Piecewise((_square(k, v_ov, v_ds, lam), v_ov >= join),
                        (_square(k, join, v_ds, lam) * sp.exp(2 * (v_ov - join) / join), True))


def channel_laws(polarity, v_g, v_d, v_s, symbols, v_t):
    """Square-law currents into the terminals of one MOSFET.

    Parameters
    ----------
    polarity : {"npn", "pnp"}
        ``"npn"`` for NMOS, ``"pnp"`` for PMOS.
    v_g, v_d, v_s : sympy expressions
        Node voltages of gate, drain and source.
    symbols : dict
        Output of :func:`operating_symbols`.
    v_t : sympy expression
        Thermal voltage of the channel (sets the join of the subthreshold
        continuation); ``symbols["V_T"]`` for the device's own temperature.

    Returns
    -------
    dict
        ``into_d``, ``into_s``, ``into_g`` (signed currents into the
        terminals) and the normalised ``v_gs``, ``v_ds``, ``v_gd``, ``v_ov``,
        ``v_dsat``, ``i_d`` (conduction positive for either polarity).
    """
    import sympy as sp

    sign = 1 if _ACCEPTED[polarity] == "npn" else -1
    v_gs = sign * (v_g - v_s)
    v_ds = sign * (v_d - v_s)
    v_gd = v_gs - v_ds
    k, v_th, lam, n = (symbols[key] for key in ("K", "V_th", "lambda", "n"))
    join = 2 * n * v_t
    v_ov = v_gs - v_th
    v_dsat = effective_overdrive(v_ov, join)
    forward = forward_current(k, v_ov, v_ds, lam, join)
    reverse = -forward_current(k, v_gd - v_th, -v_ds, lam, join)
    i_d = sp.Piecewise((forward, v_ds >= 0), (reverse, True))
    return {
        "into_d": sign * i_d,
        "into_s": -sign * i_d,
        "into_g": sp.Integer(0),
        "v_gs": v_gs, "v_ds": v_ds, "v_gd": v_gd, "v_ov": v_ov, "v_dsat": v_dsat, "i_d": i_d,
    }
