"""Kinds of parts, one module each (see :mod:`kit.devices.base` for what a kind is).

Every module of this package that defines ``KIND`` (or a tuple ``KINDS``)
is registered by discovery: a new kind of part is one new module.

>>> sorted(KINDS)
['bjt', 'diode', 'jfet', 'mos', 'opamp', 'resistor', 'source', 'zener']
"""

import importlib
import pkgutil

from kit.devices.base import DeviceKind, DeviceModel, Param, check_range, thermal_voltage


def _discover():
    found = {}
    for info in pkgutil.iter_modules(__path__):
        if info.name == "base":
            continue
        module = importlib.import_module(f"{__name__}.{info.name}")
        for kind in getattr(module, "KINDS", ()) or ([module.KIND] if hasattr(module, "KIND") else []):
            if kind.key in found:
                raise RuntimeError(f"two kinds of part are named {kind.key}")
            found[kind.key] = kind
    return dict(sorted(found.items()))


KINDS = _discover()

__all__ = ["KINDS", "DeviceKind", "DeviceModel", "Param", "check_range", "thermal_voltage"]
