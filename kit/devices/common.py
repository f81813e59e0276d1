"""What every device model dataclass shares: validated copies and a plain dict of numbers."""

from __future__ import annotations

from dataclasses import fields, replace

from kit.errors import ParameterError


class ModelValues:
    """Mixin for frozen device dataclasses whose numeric fields are listed in ``LIMITS``.

    ``LIMITS`` maps field name -> (lowest, highest, unit); ``WHAT`` names the
    device in messages.
    """

    LIMITS: dict = {}
    WHAT = "device"

    def with_values(self, **changes):
        """A copy with some parameters changed (validated like the original)."""
        unknown = set(changes) - {f.name for f in fields(self)}
        if unknown:
            raise ParameterError(f"unknown {self.WHAT} parameter", parameter=sorted(unknown)[0],
                                 valid=", ".join(self.LIMITS))
        return replace(self, **changes)

    def numbers(self):
        """The numeric parameters as a dict (for parameter vectors and JSON)."""
        return {name: float(getattr(self, name)) for name in self.LIMITS}
