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

An NMOS sinks (``n`` sense), a PMOS sources (``p`` sense); designs of
MOSFET circuits say ``nmos`` and ``pmos``.
"""

from __future__ import annotations

import numpy as np

from kit.devices.base import BOLTZMANN_OVER_CHARGE, DeviceKind, Param
from kit.words import assumption

NO_CLM = assumption("no_clm", "no channel-length modulation (λ → 0)", excludes=("lambda_",))
SQUARE_LAW = assumption("square_law", "MOSFET square law in saturation (strong inversion, "
                        "no subthreshold continuation)", excludes=("nsub_",))
MATCHED_MOS = assumption("matched_mos", "matched MOSFETs (equal k′, V_th and λ, one temperature)")


class MOSFET(DeviceKind):
    """The enhancement MOSFET kind (see the module docstring)."""

    key = "mos"
    law = "MOSFET square law with channel-length modulation (continued below threshold)"
    title = "MOSFET"
    terminals = ("g", "d", "s")
    words = {"n": "nmos", "p": "pmos"}
    params = (
        Param("k_prime", "A/V²", 1e-7, 1e3, "process transconductance μC_ox (a discrete part's "
              "K = k′W/L with W/L = 1)", "k′"),
        Param("w_over_l", "", 1e-3, 1e6, "channel width over length", "W/L"),
        Param("v_th", "V", 0.05, 10.0, "threshold voltage magnitude at T_ref", "V_th"),
        Param("lambda_clm", "1/V", 0.0, 1.0, "channel-length modulation coefficient", "λ"),
        Param("mu_exp", "", 0.0, 3.0, "mobility temperature exponent (k′ ∝ T^-μexp)", "μ_exp"),
        Param("tc_vth", "V/K", -10e-3, 5e-3, "threshold temperature slope", "TC_Vth"),
        Param("n_sub", "", 1.0, 3.0, "weak-inversion slope factor of the subthreshold continuation",
              "n"),
        Param("bv_dss", "V", 1.0, 2000.0, "drain-source breakdown voltage", "BV_DSS", rating=True),
        Param("theta_ja", "K/W", 0.1, 2000.0, "junction-to-ambient thermal resistance", "θ_JA",
              rating=True),
        Param("t_j_max", "K", 300.0, 600.0, "highest junction temperature", "T_J(max)", rating=True),
    )
    typical_values = {
        "n": dict(k_prime=0.2, w_over_l=1.0, v_th=2.0, lambda_clm=0.01, mu_exp=1.5, tc_vth=-2e-3,
                  n_sub=1.5, bv_dss=60.0, theta_ja=350.0, t_j_max=423.15),
        "p": dict(k_prime=0.1, w_over_l=1.0, v_th=2.0, lambda_clm=0.02, mu_exp=1.5, tc_vth=-2e-3,
                  n_sub=1.5, bv_dss=50.0, theta_ja=350.0, t_j_max=423.15),
    }
    typical_labels = {
        "n": "typical discrete small-signal NMOS (generic values from memory, not a part's data)",
        "p": "typical discrete small-signal PMOS (generic values from memory, not a part's data)",
    }
    quantities = ("v_gs", "v_ds", "v_gd", "v_ov", "v_dsat", "i_d")
    step_limited = ()  # no exponential above the join, so no junction-style step limit is needed
    breakdown = "bv_dss"  # the rating that bounds the load voltage
    good_region = "saturation"
    causes = {"triode": "leaves saturation (triode)", "cutoff": "falls below threshold",
              "breakdown": "reaches BV_DSS", "power": "reaches its dissipation limit"}
    sensitivity = {"k_prime": "A/V²", "v_th": "V", "lambda_clm": "1/V"}
    symbol_roles = {
        "K": ("K_", "K", "transconductance K = k′W/L (mobility)"),
        "V_th": ("Vth_", "V_{th}", "threshold voltage V_th"),
        "lambda": ("lambda_", r"\lambda", "channel-length modulation λ"),
        "n": ("nsub_", "n", "weak-inversion slope n"),
        "V_T": ("V_T_", "V_{T}", "thermal voltage V_T"),
    }

    def assumptions_of(self, role):
        return {"V_th": {"real": True}, "lambda": {"nonnegative": True}}.get(role, {"positive": True})

    # -- symbolic -----------------------------------------------------------------
    def temperature_map(self, name, params, junction, t_ref, scale):
        """``K = scale W/L k′ (T/T0)^-μexp``, ``V_th = V_th0 + TC_Vth (T - T0)`` at the channel temperature."""
        op = self.operating_symbols(name)
        return {
            op["K"]: scale * params["w_over_l"] * params["k_prime"] * (junction / t_ref) ** (-params["mu_exp"]),
            op["V_th"]: params["v_th"] + params["tc_vth"] * (junction - t_ref),
            op["lambda"]: params["lambda_clm"],
            op["n"]: params["n_sub"],
            op["V_T"]: BOLTZMANN_OVER_CHARGE * junction,
        }

    def stamp(self, sense, voltages, symbols):
        """Square-law currents into the terminals (gate draws none) and the normalised quantities."""
        return channel_stamp(sense, voltages["g"], voltages["d"], voltages["s"],
                             symbols["K"], symbols["V_th"], symbols["lambda"], symbols["n"], symbols["V_T"])

    def small_signal(self, quantities, symbols):
        """Square-law ``g_m = K V_ov (1 + λ V_DS)`` and ``r_o = 2/(λ K V_ov²)`` in saturation.

        Written with the plain overdrive, not the piecewise law (whose every
        branch NumPy would evaluate and divide by).  ``λ`` gets a floor of
        1e-15 1/V so that λ = 0 gives a huge finite r_o instead of 1/0 (the
        change is below 1e-9 relative for any λ above 1e-6 1/V).
        """
        k, lam = symbols["K"], symbols["lambda"]
        v_ov = quantities["v_ov"]
        return {"g_m": k * v_ov * (1 + lam * quantities["v_ds"]),
                "r_o": 2 / ((lam + LAMBDA_FLOOR) * k * v_ov ** 2)}

    def small_signal_stamp(self, quantities, symbols):
        s = self.small_signal(quantities, symbols)
        return [("gm", "d", "s", "g", "s", s["g_m"]), ("g", "d", "s", 1 / s["r_o"])]

    def start(self, sense, current, symbols):
        """``V_GS`` that carries ``current`` in saturation (square law, no λ)."""
        import sympy as sp

        return symbols["V_th"] + sp.sqrt(2 * current / symbols["K"])

    # -- numeric ------------------------------------------------------------------
    def regions(self, j, p, temp, edge):
        """``saturation``, ``triode`` (below the saturation voltage) or ``cutoff`` (below threshold)."""
        region = np.where(j["v_ds"] < j["v_dsat"], "triode", "saturation").astype(object)
        region[j["v_ov"] < 0] = "cutoff"
        return region

    def margins(self, j, p, temp, edge):
        """Triode and cut-off (V), breakdown (V) and dissipation (W, at the point's temperature)."""
        return {
            "triode": j["v_ds"] - j["v_dsat"],
            "cutoff": j["v_ov"],
            "breakdown": p.bv_dss - j["v_ds"],
            "power": (p.t_j_max - temp) / p.theta_ja - self.dissipation(j),
        }

    def dissipation(self, j):
        """``V_DS I_D`` in W (no gate current)."""
        return j["v_ds"] * j["i_d"]

    def current(self, j):
        return j["i_d"]

    def describe(self, j):
        """One line of a solved part.

        Examples
        --------
        >>> MOSFET().describe({"v_gs": 2.5, "v_ds": 8.0, "v_ov": 0.5, "i_d": 0.01})
        'V_GS 2.500 V, V_DS 8.000 V, V_ov 0.500 V, I_D 10 mA'
        """
        from kit.quantities import format_quantity

        return (f"V_GS {j['v_gs']:.3f} V, V_DS {j['v_ds']:.3f} V, "
                f"V_ov {j['v_ov']:.3f} V, I_D {format_quantity(j['i_d'], 'A', 4)}")


LAMBDA_FLOOR = 1e-15  # 1/V


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
    v = np.maximum(v_ds, smallest_v_ds)
    clm = 1 + lam * v
    saturated = np.sqrt(2 * current / (k * clm))
    triode = current / (k * v * clm) + v / 2
    strong = np.where(v >= saturated, saturated, triode)
    at_join = k * clm * np.where(v < join, join * v - v ** 2 / 2, join ** 2 / 2)
    weak = join + join / 2 * np.log(np.maximum(current, 1e-300) / at_join)
    return np.where(strong >= join, strong, weak)


# --- the symbolic law (SymPy imported lazily: the numeric path does not need it)

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


def channel_stamp(sense, v_g, v_d, v_s, k, v_th, lam, n, v_t):
    """Square-law currents into drain, source and gate of a channel, and its normalised quantities.

    Shared by the MOSFET and the JFET (whose law is the same square law
    with ``K = 2 I_DSS / V_P²`` and ``V_th = V_P``).  ``v_t`` sets the join
    ``2 n V_T`` of the subthreshold continuation.
    """
    import sympy as sp

    sign = 1 if sense == "n" else -1
    v_gs = sign * (v_g - v_s)
    v_ds = sign * (v_d - v_s)
    v_gd = v_gs - v_ds
    join = 2 * n * v_t
    v_ov = v_gs - v_th
    v_dsat = effective_overdrive(v_ov, join)
    forward = forward_current(k, v_ov, v_ds, lam, join)
    reverse = -forward_current(k, v_gd - v_th, -v_ds, lam, join)
    i_d = sp.Piecewise((forward, v_ds >= 0), (reverse, True))
    currents = {"d": sign * i_d, "s": -sign * i_d, "g": sp.Integer(0)}
    return currents, {"v_gs": v_gs, "v_ds": v_ds, "v_gd": v_gd, "v_ov": v_ov, "v_dsat": v_dsat,
                      "i_d": i_d}


KIND = MOSFET()


def overdrive_for_current_expression(current, v_ds, k, lam, join, smallest_v_ds=1e-3):
    """The SymPy twin of :func:`overdrive_for_current`, for starting points compiled with a model.

    Saturation, triode and the exponential continuation below the join
    inverted as there; every condition compares plain expressions, so the
    generated code selects with boolean arrays.  ``current`` must be
    positive (guard a closed form with :func:`kit.circuit.blocks.positive_or`).

    Examples
    --------
    >>> import sympy as sp
    >>> i, v = sp.symbols("i v", positive=True)
    >>> u = overdrive_for_current_expression(i, v, 0.2, 0.01, 0.078)
    >>> cases = [(0.01, 5.0), (0.01, 0.1), (1e-5, 5.0), (1e-5, 1e-2)]
    >>> all(abs(float(u.subs({i: a, v: b})) - float(overdrive_for_current(a, b, 0.2, 0.01, 0.078)))
    ...     < 1e-12 for a, b in cases)
    True
    """
    import sympy as sp

    v = sp.Max(v_ds, smallest_v_ds)
    clm = 1 + lam * v
    saturated = sp.sqrt(2 * current / (k * clm))
    triode = current / (k * v * clm) + v / 2
    at_join = k * clm * sp.Piecewise((join * v - v ** 2 / 2, v < join), (join ** 2 / 2, True))
    weak = join + join / 2 * sp.log(current / at_join)
    # v >= saturated <=> v^2 >= 2 I/(K clm): written without the root.
    in_saturation = k * clm * v ** 2 >= 2 * current
    return sp.Piecewise((saturated, in_saturation & (saturated >= join)),
                        (triode, ~in_saturation & (triode >= join)),
                        (weak, True))
