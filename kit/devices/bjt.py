"""Bipolar transistor: Ebers–Moll transport model with the Early effect, and its temperature laws.

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

Temperature laws, at the junction temperature ``T = temp + t_rise``
(Getreu, *Modeling the Bipolar Transistor*, 1976; the usual temperature
scaling of I_S and beta, from memory)::

    V_T(T)    = k T / q
    I_S(T)    = I_S(T0) (T/T0)^m_IS exp[(q E_g / k)(1/T0 - 1/T)]
    beta_F(T) = beta_F(T0) (T/T0)^m_beta (1 + TC_beta (T - T0))

``m_IS`` is ``i_s_temp_exponent`` and ``m_beta`` is ``beta_temp_exponent``
(E_g and m_IS are a fitted pair).  The beta law is a power law times a
linear factor: set ``beta_temp_exponent = 0`` for the purely linear %/K
form, ``beta_tc = 0`` (the default) for the power law.

Saturation edges.  ``vce_sat`` calls a transistor saturated below its
datasheet-style ``v_ce_sat``.  ``vcb_zero`` is the conservative design rule
"keep the collector junction off": saturated once that junction is forward
biased, which here means by more than one thermal voltage
(:data:`ZERO_BIAS_THERMAL_VOLTAGES`).  Within a thermal voltage of zero the
junction is at zero bias on its own scale — it passes less than
``(e - 1) I_S/β_R``, about a billionth of the base current of the typical
part at a milliampere — and circuits hold transistors there by design: a
diode connection (V_CB = 0 by wiring), or the improved Wilson mirror's
copying transistor, whose V_CB is the difference of two matched V_BEs, a few
millivolts either way.  The rule judges the transistor, not the circuit:
two transistors at the same bias get the same verdict, so the edge of an
output transistor also lies one thermal voltage (26 mV at 300 K) past
V_CB = 0.  That is far inside the forward bias at which a collector junction
starts to matter: about 0.4 V (Sedra & Smith, *Microelectronic Circuits*,
from memory), 0.43 V for a 1 % rise of the typical part's base current in
the equations above.
"""

from __future__ import annotations

import numpy as np

from kit.devices.base import BOLTZMANN_OVER_CHARGE, DeviceKind, Param, thermal_voltage
from kit.words import assumption

# A junction with less than this many thermal voltages of forward bias counts
# as not forward biased (for telling reverse operation apart).  A transistor
# is cut off when its collector current is below CUTOFF_CURRENT: a voltage
# criterion alone would call a hot, large part cut off while it conducts.
CUTOFF_THERMAL_VOLTAGES = 8.0
CUTOFF_CURRENT = 1e-10  # A
# Under the vcb_zero edge the collector junction counts as forward biased only
# beyond this many thermal voltages (see the module docstring): a circuit that
# holds V_CB at zero with a V_BE difference stays inside while the currents
# (or Early factors) of the two junctions differ by less than a factor e.
ZERO_BIAS_THERMAL_VOLTAGES = 1.0

EDGES = ("vce_sat", "vcb_zero")

NO_EARLY = assumption("no_early", "no Early effect (V_A → ∞)", excludes=("V_A_",))
BASE_CURRENT_NEGLECTED = assumption("base_current_neglected", "base currents neglected (β → ∞)",
                                    excludes=("beta_", "betaR_"))
ALPHA_ONE = assumption("alpha_one", "α = 1 (I_C = I_E)")
VBE_FIXED = assumption("vbe_fixed", "V_BE fixed at the hand-analysis value V_BE(on)",
                       requires=("V_BE_on",))
FORWARD_ACTIVE = assumption("forward_active", "forward active; reverse and leakage terms dropped",
                            excludes=("betaR_",))


class BJT(DeviceKind):
    """The bipolar transistor kind (see the module docstring)."""

    key = "bjt"
    law = "Ebers–Moll transport model with the Early factor on the transport current"
    title = "bipolar transistor"
    terminals = ("b", "c", "e")
    words = {"n": "npn", "p": "pnp"}
    params = (
        Param("i_s", "A", 1e-22, 1e-6, "transport saturation current at T_ref", "I_S"),
        Param("beta_f", "", 1.0, 1e5, "forward current gain, model parameter (not I_C/I_B)", "β_F"),
        Param("beta_r", "", 0.01, 1e3, "reverse current gain (matters near saturation)", "β_R"),
        Param("v_a", "V", 1.0, 1e4, "forward Early voltage", "V_A", allow_inf=True),
        Param("e_g", "eV", 0.5, 2.0, "activation energy of I_S (fitted with its exponent)", "E_g"),
        Param("i_s_temp_exponent", "", -10.0, 10.0, "temperature exponent of I_S", "m_IS"),
        Param("beta_temp_exponent", "", -5.0, 5.0, "temperature exponent of β_F (power law)", "m_β"),
        Param("beta_tc", "1/K", -0.05, 0.05, "linear temperature coefficient of β_F", "TC_β"),
        Param("v_ce_sat", "V", 0.0, 2.0, "V_CE below which the part counts as saturated "
              "(a datasheet-style value, collector resistance included)", "V_CE(sat)", rating=True),
        Param("bv_ceo", "V", 1.0, 2000.0, "collector-emitter breakdown voltage", "BV_CEO", rating=True),
        Param("theta_ja", "K/W", 0.1, 2000.0, "junction-to-ambient thermal resistance", "θ_JA",
              rating=True),
        Param("t_j_max", "K", 300.0, 600.0, "highest junction temperature", "T_J(max)", rating=True),
    )
    typical_values = {
        "n": dict(i_s=1e-14, beta_f=200.0, beta_r=2.0, v_a=100.0, e_g=1.11, i_s_temp_exponent=3.0,
                  beta_temp_exponent=1.5, beta_tc=0.0, v_ce_sat=0.2, bv_ceo=40.0, theta_ja=250.0,
                  t_j_max=423.15),
        "p": dict(i_s=1e-14, beta_f=150.0, beta_r=2.0, v_a=50.0, e_g=1.11, i_s_temp_exponent=3.0,
                  beta_temp_exponent=1.5, beta_tc=0.0, v_ce_sat=0.25, bv_ceo=40.0, theta_ja=250.0,
                  t_j_max=423.15),
    }
    typical_labels = {
        "n": "typical small-signal NPN (generic values from memory, not a part's data)",
        "p": "typical small-signal PNP (generic values from memory, not a part's data)",
    }
    quantities = ("v_be", "v_bc", "v_ce", "i_c", "i_b")
    step_limited = ("v_be", "v_bc")
    breakdown = "bv_ceo"  # the rating that bounds the load voltage
    good_region = "active"
    causes = {"saturation": "saturates", "cutoff": "cuts off", "breakdown": "reaches BV_CEO",
              "power": "reaches its dissipation limit", "beta_tc": "has β_F(T) ≤ 0",
              "v_a": "has a negative Early factor (V_CE < −V_A)"}
    sensitivity = {"beta_f": "", "v_a": "V"}
    symbol_roles = {
        "I_S": ("I_S_", "I_{S}", "saturation current I_S"),
        "beta": ("beta_", r"\beta", "current gain β_F"),
        "beta_R": ("betaR_", r"\beta_{R}", "reverse gain β_R"),
        "V_A": ("V_A_", "V_{A}", "Early voltage V_A"),
        "V_T": ("V_T_", "V_{T}", "thermal voltage V_T"),
    }

    # -- symbolic ---------------------------------------------------------------
    def temperature_map(self, name, params, junction, t_ref, scale):
        import sympy as sp

        op = self.operating_symbols(name)
        v_t = BOLTZMANN_OVER_CHARGE * junction
        ratio = junction / t_ref
        return {
            op["V_T"]: v_t,
            op["I_S"]: scale * params["i_s"] * ratio ** params["i_s_temp_exponent"]
            * sp.exp(params["e_g"] / v_t * (ratio - 1)),
            op["beta"]: params["beta_f"] * ratio ** params["beta_temp_exponent"]
            * (1 + params["beta_tc"] * (junction - t_ref)),
            op["beta_R"]: params["beta_r"],
            op["V_A"]: params["v_a"],
        }

    def stamp(self, sense, voltages, symbols):
        """Ebers–Moll currents into the terminals and the normalised junction quantities."""
        import sympy as sp

        sign = 1 if sense == "n" else -1
        v_b, v_c, v_e = voltages["b"], voltages["c"], voltages["e"]
        v_be = sign * (v_b - v_e)
        v_bc = sign * (v_b - v_c)
        v_ce = v_be - v_bc
        i_s, beta, beta_r, v_a, v_t = (symbols[k] for k in ("I_S", "beta", "beta_R", "V_A", "V_T"))
        forward = sp.exp(v_be / v_t)
        reverse = sp.exp(v_bc / v_t)
        transport = i_s * (forward - reverse) * (1 + v_ce / v_a)
        i_c = transport - i_s / beta_r * (reverse - 1)
        i_b = i_s / beta * (forward - 1) + i_s / beta_r * (reverse - 1)
        currents = {"c": sign * i_c, "b": sign * i_b, "e": -sign * (i_c + i_b)}
        return currents, {"v_be": v_be, "v_bc": v_bc, "v_ce": v_ce, "i_c": i_c, "i_b": i_b}

    def small_signal(self, quantities, symbols):
        """Hybrid-π ``g_m = I_C/V_T``, ``r_π = V_T/I_B``, ``r_o = (V_A + V_CE)/I_C``, ``β = I_C/I_B``.

        Same model as the exact equations (forward Early factor on the
        transport current), at the transistor's own junction temperature.
        """
        i_c, i_b, v_ce = quantities["i_c"], quantities["i_b"], quantities["v_ce"]
        v_t, v_a = symbols["V_T"], symbols["V_A"]
        return {"g_m": i_c / v_t, "r_pi": v_t / i_b, "r_o": (v_a + v_ce) / i_c, "beta": i_c / i_b}

    def small_signal_stamp(self, quantities, symbols):
        """Hybrid-π: ``i_b = v_be/r_π``, ``i_c = g_m v_be + v_ce/r_o`` (the same for NPN and PNP)."""
        s = self.small_signal(quantities, symbols)
        return [("g", "b", "e", 1 / s["r_pi"]), ("gm", "c", "e", "b", "e", s["g_m"]),
                ("g", "c", "e", 1 / s["r_o"])]

    def start(self, sense, current, symbols):
        """Forward ``V_BE`` for a collector current (exponential law, no Early effect)."""
        import sympy as sp

        return symbols["V_T"] * sp.log(current / symbols["I_S"])

    # -- numeric ------------------------------------------------------------------
    def regions(self, j, p, temp, edge):
        """``active``, ``saturated`` (by ``edge``, see :meth:`margins`), ``cutoff``, ``reverse``."""
        v_t = thermal_voltage(temp)
        off = CUTOFF_THERMAL_VOLTAGES * v_t
        saturated = _saturation_margin(j, p, v_t, edge) < 0.0
        region = np.where(saturated, "saturated", "active").astype(object)
        reverse = (j["v_be"] < off) & (j["v_bc"] >= off)
        region[reverse] = "reverse"
        region[(j["v_bc"] < off) & (j["i_c"] < CUTOFF_CURRENT)] = "cutoff"
        # Not saturated, yet no forward-biased emitter junction or no collector
        # current worth the name: what flows is leakage (a hot part with a
        # large I_S passes I_S/beta_R at V_BE <= 0), so the part is off.
        region[~saturated & ~reverse & ((j["i_c"] < CUTOFF_CURRENT) | (j["v_be"] <= 0.0))] = "cutoff"
        return region

    def domain(self, j, op):
        """``β_F(T) > 0`` (its temperature law), ``1 + V_CE/V_A > 0`` (the Early factor).

        Examples
        --------
        >>> import numpy as np
        >>> law = KIND.domain({"v_ce": np.array([5.0, -120.0])},
        ...                   {"beta": np.array([180.0, 180.0]), "V_A": np.array([100.0, 100.0])})
        >>> law["v_a"][1] > 0
        array([ True, False])
        """
        with np.errstate(divide="ignore", invalid="ignore"):
            early = 1.0 + j["v_ce"] / op["V_A"] if "v_ce" in j else np.ones_like(op["beta"])
        return {"beta_tc": ("β_F(T) > 0", op["beta"]),
                "v_a": ("Early factor 1 + V_CE/V_A > 0", np.where(np.isinf(op["V_A"]), 1.0, early))}

    def margins(self, j, p, temp, edge):
        """Saturation and cut-off (V), breakdown (V) and dissipation (W, at the point's temperature).

        Saturation by ``edge``: ``V_CE - V_CE(sat)`` for ``"vce_sat"``;
        ``V_T - V_BC`` for ``"vcb_zero"`` (forward bias of the collector
        junction beyond one thermal voltage; see the module docstring).

        Examples
        --------
        A transistor held at V_BC = +1.6 mV (the improved Wilson's Q1) is at
        zero bias; one 40 mV forward is saturated by the conservative rule:

        >>> import numpy as np
        >>> j = {"v_be": np.array([0.668, 0.668]), "v_bc": np.array([0.0016, 0.04]),
        ...      "v_ce": np.array([0.6664, 0.628]), "i_c": np.array([2e-3, 2e-3]),
        ...      "i_b": np.array([1e-5, 1e-5])}
        >>> p = KIND.typical("npn")
        >>> KIND.margins(j, p, 300.0, "vcb_zero")["saturation"] > 0
        array([ True, False])
        """
        v_t = thermal_voltage(temp)
        # The cut-off criterion as a voltage, V_T ln(I_C / I_cutoff): continuous for I_C > 0.
        # A forward-biased collector junction means saturation, not cut-off (the
        # collector current of a hard-saturated part is small too).
        # The emitter junction must be forward biased too (V_BE > 0): leakage
        # alone can exceed the cut-off current in a hot part with a large I_S.
        by_current = np.minimum(v_t * np.log(np.maximum(j["i_c"], 1e-300) / CUTOFF_CURRENT), j["v_be"])
        saturation = _saturation_margin(j, p, v_t, edge)
        # Only a part already judged saturated is spared the current criterion
        # (its cause is saturation); one with V_CE above V_CE(sat) and no
        # current is off, whatever its collector junction does.
        cutoff = np.where((j["v_bc"] >= CUTOFF_THERMAL_VOLTAGES * v_t) & (saturation < 0), np.inf, by_current)
        return {
            "saturation": saturation,
            "cutoff": cutoff,
            "breakdown": p.bv_ceo - j["v_ce"],
            "power": (p.t_j_max - temp) / p.theta_ja - self.dissipation(j),
        }

    def dissipation(self, j):
        """``V_CE I_C + V_BE I_B`` in W."""
        return j["v_ce"] * j["i_c"] + j["v_be"] * j["i_b"]

    def current(self, j):
        return j["i_c"]

    def describe(self, j):
        """One line of a solved transistor.

        Examples
        --------
        >>> BJT().describe({"v_be": 0.648, "v_ce": 5.89, "i_c": 9.5e-4, "i_b": 4.5e-6})
        'V_BE 648 mV, V_CE 5.89 V, I_C 950 µA, I_C/I_B 211.1'
        """
        from kit.quantities import format_quantity

        return (f"V_BE {format_quantity(j['v_be'], 'V', 4)}, V_CE {format_quantity(j['v_ce'], 'V')}, "
                f"I_C {format_quantity(j['i_c'], 'A')}, I_C/I_B {j['i_c'] / j['i_b']:.1f}")


def _saturation_margin(j, p, v_t, edge):
    """Distance to saturation (V) by ``edge``: ``V_CE - V_CE(sat)`` or ``n V_T - V_BC``."""
    if edge == "vce_sat":
        return j["v_ce"] - p.v_ce_sat
    return ZERO_BIAS_THERMAL_VOLTAGES * v_t - j["v_bc"]


KIND = BJT()
