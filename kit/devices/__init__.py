"""Device models: the bipolar transistor and its temperature laws."""

from kit.devices.bjt import TYPICAL_NPN, TYPICAL_PNP, BJTModel, thermal_voltage, typical

__all__ = ["BJTModel", "TYPICAL_NPN", "TYPICAL_PNP", "thermal_voltage", "typical"]
