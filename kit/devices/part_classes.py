"""Part classes of our own: generic min/typ/max data for the parts a bias design is built from.

Each class is a datasheet-style entry (:mod:`kit.devices.datasheet`) of a
*kind* of part one buys or one process offers — a small-signal NPN, a
logic-level power MOSFET, a precision op-amp — with numbers we wrote from
general experience.  They are **generic, from memory, not a part's data**:
no vendor's part, no data sheet copied.  Use them to start a design and to
see what a realistic spread does; replace them with the data of the part
you will buy (a record names a class and overrides any field).

``biasbook parts`` lists them.

Examples
--------
>>> part = get("npn-small-signal").convert()
>>> part.model.polarity, [round(b, 1) for b in part.ranges["beta_f"]]
('npn', [95.2, 381.0])
>>> sorted(CLASSES)[:3]
['dual-npn-matched', 'ic-nmos', 'ic-npn']
"""

from __future__ import annotations

from dataclasses import dataclass, field
from types import MappingProxyType

from kit.devices.datasheet import DEFAULT_TEST_TEMPERATURE, from_datasheet
from kit.errors import ParameterError

GENERIC = "generic, from memory, not a part's data"
C25 = DEFAULT_TEST_TEMPERATURE  # 25 degC
C150, C175 = 423.15, 448.15


@dataclass(frozen=True)
class PartClass:
    """A generic part: its kind, polarity, datasheet entry and any model parameters it sets directly.

    Attributes
    ----------
    key : str
        Its name in records (``class = "npn-small-signal"``) and in ``biasbook parts``.
    kind : str
        The kind of part (``"bjt"``, ``"mos"``, ``"zener"``, ``"opamp"``).
    polarity : str
        The kind's polarity word (``"npn"``, ``"pmos"``; ``"zener"``, ``"op-amp"``).
    title : str
        What it is, in a few words.
    sheet : dict
        The datasheet entry (SI floats).
    params : dict
        Model parameters set directly (those no data sheet states, such as
        a process's W/L of a unit device or the temperature exponents).
    matching : dict
        Spec fields a matched pair or one die offers (``mismatch_vbe`` ...).
    """

    key: str
    kind: str
    polarity: str
    title: str
    sheet: dict
    params: dict = field(default_factory=dict)
    matching: dict = field(default_factory=dict)

    @property
    def label(self):
        """The words every report shows beside the part."""
        return f"{self.title} (class {self.key}; {GENERIC})"

    def base(self):
        """The kind's typical part with this class's direct parameters."""
        from kit.devices import KINDS

        kind = KINDS[self.kind]
        return kind.typical(self.polarity).with_values(**self.params)

    def convert(self, sheet_changes=None, t_ref=DEFAULT_TEST_TEMPERATURE, rails=None, supply_range=None,
                base=None):
        """This class (with ``sheet_changes`` over its entry) as a :class:`~kit.devices.datasheet.DatasheetPart`.

        ``base`` replaces the class's starting model (a topology's own typical
        part with this class's direct parameters over it, for example).
        """
        from kit.devices import KINDS
        from kit.devices.datasheet import merge

        sheet = merge(self.sheet, sheet_changes or {})  # checked whole by from_datasheet
        start = (base if base is not None else KINDS[self.kind].typical(self.polarity)).with_values(**self.params)
        return from_datasheet(KINDS[self.kind], self.polarity, sheet, base=start, t_ref=t_ref, rails=rails,
                              supply_range=supply_range, label=self.label)

    def describe(self):
        """A plain dict for listings and JSON."""
        return {"class": self.key, "kind": self.kind, "polarity": self.polarity, "title": self.title,
                "source": GENERIC, "datasheet": {k: dict(v) for k, v in self.sheet.items()},
                "params": dict(self.params), "matching": dict(self.matching)}


def _bjt(key, polarity, title, *, h_fe, at, v_be, v_a, v_ce_sat, bv_ceo, p_tot=None, theta_ja=None,
         t_j_max=C150, **more):
    """A bipolar class: h_FE (min, typ, max) and V_BE at ``at`` = (I_C, V_CE), ratings.

    A discrete part states P_tot and its derating; a device on a die has no
    P_tot of its own, only its package's θ_JA.
    """
    i_c, v_ce = at
    sheet = {
        "h_fe": {"min": h_fe[0], "typ": h_fe[1], "max": h_fe[2], "i_c": i_c, "v_ce": v_ce},
        "v_be": {"value": v_be, "i_c": i_c, "v_ce": v_ce},
        "v_a": {"value": v_a},
        "v_ce_sat": {"value": v_ce_sat[0], "i_c": v_ce_sat[1], "forced_gain": 10.0},
        "bv_ceo": {"value": bv_ceo},
    }
    if p_tot is not None:
        sheet["p_tot"] = {"value": p_tot, "t_derate": C25, "t_j_max": t_j_max}
    if theta_ja is not None:
        sheet["theta_ja"] = {"value": theta_ja}
    return PartClass(key, "bjt", polarity, title, sheet, **more)


def _mos(key, polarity, title, *, v_th, i_d_th, lambda_clm, bv_dss, p_tot=None, theta_ja=None, t_j_max=C150,
         transfer=None, k_prime=None, params=None, **more):
    """A MOSFET class: V_GS(th) (min, typ, max) at ``i_d_th``, a transfer point or k′ range, ratings."""
    sheet = {"v_th": {"min": v_th[0], "typ": v_th[1], "max": v_th[2], "i_d": i_d_th},
             "lambda_clm": {"value": lambda_clm}, "bv_dss": {"value": bv_dss}}
    if p_tot is not None:
        sheet["p_tot"] = {"value": p_tot, "t_derate": C25, "t_j_max": t_j_max}
    if theta_ja is not None:
        sheet["theta_ja"] = {"value": theta_ja}
    if transfer is not None:
        sheet["transfer"] = dict(zip(("i_d", "v_gs", "v_ds"), transfer))
    if k_prime is not None:
        sheet["k_prime"] = dict(zip(("min", "typ", "max"), k_prime))
    return PartClass(key, "mos", polarity, title, sheet, params or {}, **more)


# The numbers: generic, from memory (orders of magnitude every analog engineer
# carries around), rounded; not taken from any part's data sheet.
_ALL = (
    _bjt("npn-small-signal", "npn", "small-signal NPN, leaded or SOT-23",
         h_fe=(100.0, 200.0, 400.0), at=(2e-3, 5.0), v_be=0.66, v_a=100.0, v_ce_sat=(0.2, 10e-3),
         bv_ceo=40.0, p_tot=0.5),
    _bjt("pnp-small-signal", "pnp", "small-signal PNP, leaded or SOT-23",
         h_fe=(100.0, 180.0, 300.0), at=(2e-3, 5.0), v_be=0.67, v_a=60.0, v_ce_sat=(0.25, 10e-3),
         bv_ceo=40.0, p_tot=0.5),
    _bjt("dual-npn-matched", "npn", "matched monolithic NPN pair (two transistors on one die)",
         h_fe=(150.0, 300.0, 600.0), at=(100e-6, 5.0), v_be=0.60, v_a=120.0, v_ce_sat=(0.15, 1e-3),
         bv_ceo=45.0, p_tot=0.3, matching={"mismatch_vbe": 1e-3, "mismatch_beta": 0.1}),
    _bjt("npn-medium-power", "npn", "medium-power NPN in a small power package (on a copper pad)",
         h_fe=(40.0, 100.0, 250.0), at=(150e-3, 2.0), v_be=0.74, v_a=80.0, v_ce_sat=(0.3, 500e-3),
         bv_ceo=60.0, p_tot=1.25),
    _bjt("pnp-medium-power", "pnp", "medium-power PNP in a small power package (on a copper pad)",
         h_fe=(40.0, 100.0, 250.0), at=(150e-3, 2.0), v_be=0.75, v_a=60.0, v_ce_sat=(0.35, 500e-3),
         bv_ceo=60.0, p_tot=1.25),
    _bjt("ic-npn", "npn", "integrated-circuit process NPN, unit device",
         h_fe=(50.0, 120.0, 250.0), at=(100e-6, 3.0), v_be=0.62, v_a=80.0, v_ce_sat=(0.2, 1e-3),
         bv_ceo=30.0, theta_ja=150.0),
    _bjt("ic-pnp", "pnp", "integrated-circuit process lateral PNP, unit device",
         h_fe=(20.0, 50.0, 100.0), at=(100e-6, 3.0), v_be=0.62, v_a=40.0, v_ce_sat=(0.3, 1e-3),
         bv_ceo=30.0, theta_ja=150.0),
    _mos("nmos-small-signal", "nmos", "small-signal enhancement NMOS, SOT-23",
         v_th=(1.0, 2.0, 3.0), i_d_th=1e-3, transfer=(0.2, 4.5, 10.0), lambda_clm=0.01, bv_dss=60.0,
         p_tot=0.35),
    _mos("nmos-logic-power", "nmos", "logic-level power NMOS (full gate drive at 4.5 V)",
         v_th=(1.0, 1.6, 2.5), i_d_th=250e-6, transfer=(10.0, 4.5, 5.0), lambda_clm=0.005, bv_dss=30.0,
         p_tot=2.4, t_j_max=C175),
    _mos("ic-nmos", "nmos", "integrated-circuit process NMOS (W/L = 10 unless set)",
         v_th=(0.5, 0.7, 0.9), i_d_th=1e-6, k_prime=(80e-6, 100e-6, 120e-6), lambda_clm=0.05, bv_dss=5.5,
         theta_ja=150.0, params={"w_over_l": 10.0}),
    _mos("ic-pmos", "pmos", "integrated-circuit process PMOS (W/L = 10 unless set)",
         v_th=(0.5, 0.7, 0.9), i_d_th=1e-6, k_prime=(30e-6, 40e-6, 50e-6), lambda_clm=0.08, bv_dss=5.5,
         theta_ja=150.0, params={"w_over_l": 10.0}),
    PartClass("opamp-general", "opamp", "op-amp", "general-purpose bipolar-input op-amp", {
        "v_os": {"typ": 1e-3, "max": 5e-3}, "drift": {"typ": 5e-6, "max": 20e-6},
        "i_bias": {"typ": 80e-9, "max": 500e-9}, "gain": {"min": 5e4, "typ": 2e5},
        "swing": {"to_high": 1.5, "to_low": 1.5}, "psrr": {"min": 80.0, "v_supply": 15.0}}),
    PartClass("opamp-precision", "opamp", "op-amp", "precision low-offset op-amp", {
        "v_os": {"typ": 20e-6, "max": 75e-6}, "drift": {"typ": 0.2e-6, "max": 1e-6},
        "i_bias": {"typ": 0.5e-9, "max": 2e-9}, "gain": {"min": 1e6, "typ": 5e6},
        "swing": {"to_high": 1.2, "to_low": 1.2}, "psrr": {"min": 110.0, "v_supply": 15.0}}),
    PartClass("zener-6v2", "zener", "zener", "6.2 V zener, 5 %, half a watt", {
        "v_z": {"value": 6.2, "tolerance": 0.05, "i_z": 5e-3}, "r_z": {"value": 10.0},
        "tc_relative": {"typ": 3e-4, "min": 1e-4, "max": 5e-4}, "i_z_min": {"value": 1e-3},
        "p_tot": {"value": 0.5}}),
    PartClass("reference-2v5", "zener", "zener", "2.5 V shunt voltage reference, 0.5 %", {
        "v_z": {"value": 2.5, "tolerance": 0.005, "i_z": 1e-3}, "r_z": {"value": 0.3},
        "tc_relative": {"typ": 0.0, "min": -50e-6, "max": 50e-6}, "i_z_min": {"value": 0.2e-3},
        "p_tot": {"value": 0.3}}),
)

CLASSES = MappingProxyType({c.key: c for c in _ALL})


def get(key):
    """The part class named ``key``; a clear error listing the classes otherwise."""
    try:
        return CLASSES[key]
    except (KeyError, TypeError):
        raise ParameterError("no such part class", parameter="class", value=key,
                             valid=", ".join(CLASSES) + " (`biasbook parts` lists them)") from None


def classes_for(kind, polarity=None):
    """The classes of a kind of part (and polarity word), in listing order."""
    return [c for c in _ALL if c.kind == kind and polarity in (None, c.polarity)]
