"""Device models and, per kind of device, what the solver needs of it.

Each kind module (``bjt``; others register the same way) provides ``MODEL``
(a frozen dataclass), ``typical(polarity)``, ``QUANTITIES`` (the per-device
expressions the equations export), ``STEP_LIMITED``, ``EQUATION_PARAMETERS``,
``GOOD_REGION``, ``regions(...)``, ``margins(...)`` and ``dissipation(...)``.
"""

from kit.devices import bjt
from kit.devices import mosfet
from kit.devices.bjt import TYPICAL_NPN, TYPICAL_PNP, BJTModel, thermal_voltage, typical

KINDS = {bjt.KIND: bjt}
KINDS[mosfet.KIND] = mosfet

__all__ = ["BJTModel", "KINDS", "TYPICAL_NPN", "TYPICAL_PNP", "thermal_voltage", "typical"]
