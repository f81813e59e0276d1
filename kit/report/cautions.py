"""The safety words every report carries, written once.

:data:`GENERAL` goes with every review; :func:`cautions` adds what this
design's own numbers call for (high voltage across the compliance range, a
part hot enough to burn).
"""

from __future__ import annotations

from kit.quantities import format_quantity, format_temperature

GENERAL = (
    "Current sources drive loads that get hot and may sit at high voltages: check every "
    "transistor's and resistor's dissipation across the whole compliance range against derated "
    "ratings, breakdown voltages with margin, and the output shorted and open.",
    "The numbers come from the kit's device model with the parameters stated in this report; "
    "generic typical values are not a guarantee — use datasheet minimum and maximum values.",
    "Mains-connected and high-voltage work must follow local codes and be checked by a "
    "licensed practitioner.",
)

# Touch-voltage and temperature thresholds, from memory: 60 V DC is the usual
# dry-skin limit of safety extra-low voltage (IEC 61140 ELV/SELV bands), and
# about 60 °C is where a metal surface becomes unsafe to keep touching
# (touch-temperature tables of IEC 62368-1).
HAZARDOUS_DC_VOLTS = 60.0
HOT_SURFACE_KELVIN = 333.15
# Heat is only this design's doing when the part warms itself by more than
# this; a hot enclosure alone is the enclosure's caution, not ours.
SELF_HEATING_KELVIN = 10.0


def cautions(evaluation):
    """Safety notes a report on this design must carry (a list of sentences, maybe empty)."""
    design = evaluation.design
    out = []
    volts = [design.values.get(name) for name in ("v_supply", "v_load")]
    volts += [evaluation.compliance.high.voltage, evaluation.compliance.low.voltage]
    highest = max(abs(v) for v in volts if v is not None)
    if highest > HAZARDOUS_DC_VOLTS:
        out.append(f"Voltages up to {format_quantity(highest, 'V')} across the compliance range "
                   f"exceed {HAZARDOUS_DC_VOLTS:g} V DC and can be hazardous to touch: insulate, "
                   "guard and label them, and follow local electrical codes; mains-derived "
                   "supplies need a licensed professional's design and sign-off.")
    runaway = getattr(evaluation, "thermal_runaway", None)
    if runaway is not None:
        network = getattr(evaluation, "thermal_network", None)
        placed = network.describe() if network is not None else "each part in its own package"
        out.append(f"With self-heating ({placed}) the stable operating points end inside the electrical "
                   f"compliance range — {runaway.text()}; the compliance stated ends there. Beyond it a part "
                   "heats until it fails: it can burn and start a fire. Couple the parts thermally, add "
                   "emitter resistance or lower the dissipation, and test with a current-limited supply.")
    hottest = evaluation.hottest
    if hottest is not None:
        part, watts, at, junction = hottest
        if junction > HOT_SURFACE_KELVIN and junction - design.temp > SELF_HEATING_KELVIN:
            out.append(f"{part} dissipates up to {format_quantity(watts, 'W')} (at a load voltage of "
                       f"{format_quantity(at, 'V')}); its junction reaches about "
                       f"{format_temperature(junction, 3)}, so the part and the board around it can "
                       "burn a finger: check the datasheet's derating and keep heat-sensitive parts "
                       "and people away.")
    return out
