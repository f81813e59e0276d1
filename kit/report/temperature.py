"""A temperature sweep in words."""

from __future__ import annotations

import numpy as np

from kit.quantities import format_quantity, format_temperature
from kit.report import tables


def text(sweep):
    lines = [f"{'ambient':>9} {'I_out':>10} {'heated':>10} {'tempco':>12}"]
    for k in np.unique(np.linspace(0, sweep.temps.size - 1, 7).astype(int)):
        lines.append(f"{format_temperature(sweep.temps[k], 3):>9} {format_quantity(sweep.i_out[k], 'A', 4):>10} "
                     f"{format_quantity(sweep.i_out_heated[k], 'A', 4):>10} "
                     f"{format_quantity(sweep.tempco[k], 'ppm/K'):>12}")
    lines.append(f"R_out isothermal {format_quantity(sweep.r_out, 'Ω')}, with self-heating "
                 f"{format_quantity(sweep.r_out_heated, 'Ω')}")
    return "\n".join(lines)


def html(sweep):
    rows = [[format_temperature(sweep.temps[k], 3), format_quantity(sweep.i_out[k], "A", 4),
             format_quantity(sweep.i_out_heated[k], "A", 4), format_quantity(sweep.tempco[k], "ppm/K")]
            for k in np.unique(np.linspace(0, sweep.temps.size - 1, 7).astype(int))]
    table = tables.table(["ambient", "I_out", "with self-heating", "tempco"], rows, numeric=(1, 2, 3))
    return tables.wrap(tables.section("Output current over temperature", table))
