"""Junction FET (depletion mode): square-law DC model with channel-length modulation.

Written, as the MOSFET is, with voltages normalised so that conduction is
positive (``v_gs = V_G - V_S`` for an n-channel part, ``V_S - V_G`` for a
p-channel one; likewise ``v_ds``).  ``V_P > 0`` is the pinch-off voltage's
*magnitude*: an n-channel part conducts for ``V_GS > -V_P``, a p-channel one
for ``V_GS < +V_P``.  With the overdrive ``v_ov = v_gs + V_P``::

    saturation (v_ds >= v_ov):  i_d = I_DSS (1 + v_gs/V_P)^2 (1 + lambda v_ds)
                                    = I_DSS (1 - V_GS/V_P)^2 (1 + lambda V_DS)  (signed V_P)
    triode     (v_ds <  v_ov):  i_d = (2 I_DSS/V_P^2)(v_ov v_ds - v_ds^2/2)(1 + lambda v_ds)
    cut-off    (v_gs < -V_P):   no channel

(Shockley's square law as taught in Sedra & Smith, *Microelectronic
Circuits*, JFET section, and Horowitz & Hill, *The Art of Electronics*,
FET chapter -- from memory.)  This is the MOSFET square law with
``K = 2 I_DSS/V_P^2`` and threshold ``-V_P``, so the kind uses the
MOSFET's channel law (:func:`kit.devices.mosfet.channel_stamp`), with its
smooth continuation below pinch-off (slope factor :data:`SLOPE_FACTOR`) that
only keeps Newton's method going: the kit calls the part *cut off* as soon
as ``v_gs < -V_P`` and accepts no design there.  The gate junction is
assumed reverse biased (no gate current, no leakage); a forward-biased gate
is reported as a limit of the part.

Temperature (from memory: Evans, *Designing with Field-Effect
Transistors*, Siliconix, ch. 1; Sze, *Physics of Semiconductor Devices*,
JFET chapter)::

    I_DSS/V_P^2 (T) = I_DSS/V_P^2 (T0) (T/T0)^(-mu_exp)       channel mobility
    V_P(T)          = V_P(T0) - tc_vp (T - T0)                 (magnitude)

``tc_vp`` is the drift of the gate-source voltage at pinch-off of an
n-channel part, about -2 mV/K: the gate junction's built-in potential
falls with temperature, so the channel opens a little wider and the
pinch-off magnitude *grows* about 2 mV/K (a p-channel part drifts the same
way in magnitude).  ``I_DSS = (I_DSS/V_P^2) V_P^2`` therefore falls with
the mobility, a little less than it: at ``T^-1.5`` near 300 K the
mobility alone takes off 0.5 %/K.  The two effects cancel at the overdrive
``v_ov = 2 |tc_vp| T/mu_exp`` (about 0.87 V at 25 degC with the typical
values; the 0.63 V of the Siliconix rule for a mobility falling 0.7 %/K) -- the JFET's zero-tempco
point.  lambda does not change with temperature in this model.

An n-channel part sinks (``n`` sense), a p-channel part sources (``p``);
designs of JFET circuits say ``njfet`` and ``pjfet``.
"""

from __future__ import annotations

import numpy as np

from kit.devices.base import BOLTZMANN_OVER_CHARGE, DeviceKind, Param
from kit.devices.mosfet import LAMBDA_FLOOR, channel_stamp
from kit.words import assumption

# Weak-inversion-like slope of the continuation below pinch-off: it only keeps
# the solve's Jacobian regular there (the kit accepts no point below pinch-off).
SLOPE_FACTOR = 1.5

JFET_SQUARE_LAW = assumption("jfet_square_law", "JFET square law in saturation (above pinch-off, "
                             "gate junction reverse biased)")


class JFET(DeviceKind):
    """The junction FET kind (see the module docstring)."""

    key = "jfet"
    law = "JFET square law with channel-length modulation (continued below pinch-off)"
    title = "JFET"
    terminals = ("g", "d", "s")
    words = {"n": "njfet", "p": "pjfet"}
    params = (
        Param("i_dss", "A", 1e-7, 10.0, "drain current at V_GS = 0 in saturation, at T_ref", "I_DSS"),
        Param("v_p", "V", 0.05, 30.0, "pinch-off voltage magnitude |V_P| at T_ref", "V_P"),
        Param("lambda_clm", "1/V", 0.0, 1.0, "channel-length modulation coefficient", "λ"),
        Param("mu_exp", "", 0.0, 3.0, "mobility temperature exponent (I_DSS/V_P² ∝ T^-μexp)", "μ_exp"),
        Param("tc_vp", "V/K", -10e-3, 5e-3, "drift of the pinch-off gate voltage of an n-channel part "
              "(|V_P| grows by −tc_vp)", "TC_VP"),
        Param("bv_gss", "V", 1.0, 1000.0, "gate-drain (gate-source, drain shorted) breakdown voltage",
              "BV_GSS", rating=True),
        Param("theta_ja", "K/W", 0.1, 2000.0, "junction-to-ambient thermal resistance", "θ_JA",
              rating=True),
        Param("t_j_max", "K", 300.0, 600.0, "highest junction temperature", "T_J(max)", rating=True),
    )
    typical_values = {
        "n": dict(i_dss=6e-3, v_p=2.0, lambda_clm=0.005, mu_exp=1.5, tc_vp=-2.2e-3, bv_gss=40.0,
                  theta_ja=350.0, t_j_max=423.15),
        "p": dict(i_dss=8e-3, v_p=2.5, lambda_clm=0.008, mu_exp=1.5, tc_vp=-2.2e-3, bv_gss=30.0,
                  theta_ja=350.0, t_j_max=423.15),
    }
    typical_labels = {
        "n": "typical discrete small-signal n-channel JFET (generic values from memory, not a part's data)",
        "p": "typical discrete small-signal p-channel JFET (generic values from memory, not a part's data)",
    }
    quantities = ("v_gs", "v_ds", "v_gd", "v_ov", "v_dsat", "i_d")
    step_limited = ()  # the gate junction carries no current in this model
    breakdown = "bv_gss"  # the rating that bounds the load voltage
    good_region = "saturation"
    causes = {"triode": "leaves saturation (triode)", "cutoff": "pinches off",
              "gate_forward": "forward-biases its gate junction",
              "breakdown": "reaches BV_GSS (gate-drain)", "power": "reaches its dissipation limit"}
    sensitivity = {"i_dss": "A", "v_p": "V", "lambda_clm": "1/V"}
    symbol_roles = {
        "I_DSS": ("I_DSS_", "I_{DSS}", "I_DSS (channel mobility and pinch-off)"),
        "V_P": ("V_P_", "V_{P}", "pinch-off voltage |V_P|"),
        "lambda": ("lambda_", r"\lambda", "channel-length modulation λ"),
        "V_T": ("V_T_", "V_{T}", "thermal voltage V_T"),
    }

    def assumptions_of(self, role):
        return {"lambda": {"nonnegative": True}}.get(role, {"positive": True})

    # -- symbolic -----------------------------------------------------------------
    def temperature_map(self, name, params, junction, t_ref, scale):
        """``V_P = V_P0 - tc_vp (T - T0)``, ``I_DSS = (I_DSS0/V_P0²)(T/T0)^-μexp V_P²`` at the channel temperature.

        ``scale`` multiplies the channel width (``I_DSS``).
        """
        op = self.operating_symbols(name)
        v_p = params["v_p"] - params["tc_vp"] * (junction - t_ref)
        beta = scale * params["i_dss"] / params["v_p"] ** 2 * (junction / t_ref) ** (-params["mu_exp"])
        return {
            op["I_DSS"]: beta * v_p ** 2,
            op["V_P"]: v_p,
            op["lambda"]: params["lambda_clm"],
            op["V_T"]: BOLTZMANN_OVER_CHARGE * junction,
        }

    def stamp(self, sense, voltages, symbols):
        """The square law with ``K = 2 I_DSS/V_P²``, threshold ``-V_P``; the gate draws no current."""
        k, threshold = self.channel_constants(symbols)
        return channel_stamp(sense, voltages["g"], voltages["d"], voltages["s"], k, threshold,
                             symbols["lambda"], SLOPE_FACTOR, symbols["V_T"])

    @staticmethod
    def channel_constants(symbols):
        """``(K, V_th) = (2 I_DSS/V_P², -V_P)`` of the shared channel law."""
        return 2 * symbols["I_DSS"] / symbols["V_P"] ** 2, -symbols["V_P"]

    def small_signal(self, quantities, symbols):
        """``g_m = (2 I_DSS/V_P²) v_ov (1 + λ v_ds)`` and ``r_o = 1/(λ (I_DSS/V_P²) v_ov²)`` in saturation.

        ``g_m = (2 I_DSS/|V_P|)(1 - V_GS/V_P)`` in the textbook's signed form;
        ``r_o`` is exactly ``1/(dI_D/dV_DS)`` of the law in saturation (λ
        gets the MOSFET's floor so that λ = 0 gives a huge finite r_o).
        """
        k, _ = self.channel_constants(symbols)
        lam = symbols["lambda"]
        v_ov = quantities["v_ov"]
        return {"g_m": k * v_ov * (1 + lam * quantities["v_ds"]),
                "r_o": 2 / ((lam + LAMBDA_FLOOR) * k * v_ov ** 2)}

    def small_signal_stamp(self, quantities, symbols):
        s = self.small_signal(quantities, symbols)
        return [("gm", "d", "s", "g", "s", s["g_m"]), ("g", "d", "s", 1 / s["r_o"])]

    def start(self, sense, current, symbols):
        """``v_gs`` that carries ``current`` in saturation (square law, no λ): ``V_P (sqrt(I/I_DSS) - 1)``."""
        import sympy as sp

        return symbols["V_P"] * (sp.sqrt(current / symbols["I_DSS"]) - 1)

    # -- numeric ------------------------------------------------------------------
    def regions(self, j, p, temp, edge):
        """``saturation``, ``triode``, ``cutoff`` (below pinch-off) or ``gate forward``."""
        region = np.where(j["v_ds"] < j["v_dsat"], "triode", "saturation").astype(object)
        region[j["v_ov"] < 0] = "cutoff"
        region[np.asarray(j["v_gs"]) > GATE_FORWARD_LIMIT] = "gate forward"
        return region

    def margins(self, j, p, temp, edge):
        """Triode, pinch-off, gate forward bias (V), gate-drain breakdown (V) and dissipation (W)."""
        return {
            "triode": j["v_ds"] - j["v_dsat"],
            "cutoff": j["v_ov"],
            "gate_forward": GATE_FORWARD_LIMIT - j["v_gs"],
            "breakdown": p.bv_gss + j["v_gd"],  # -v_gd is the gate-drain reverse voltage
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
        >>> JFET().describe({"v_gs": -0.8, "v_ds": 8.0, "v_ov": 1.2, "i_d": 0.002})
        'V_GS -0.800 V, V_DS 8.000 V, V_ov 1.200 V, I_D 2 mA'
        """
        from kit.quantities import format_quantity

        return (f"V_GS {j['v_gs']:.3f} V, V_DS {j['v_ds']:.3f} V, "
                f"V_ov {j['v_ov']:.3f} V, I_D {format_quantity(j['i_d'], 'A', 4)}")


# The model has no gate current: a gate junction forward biased at all leaves it
# (a real one conducts noticeably from a few hundred mV; common practice, no source).
GATE_FORWARD_LIMIT = 0.0  # V

KIND = JFET()
