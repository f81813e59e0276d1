"""The kit's exception family.

Every error the kit raises on purpose derives from :class:`DesignError`, which
is a :class:`ValueError`, so callers that only know the builtins still catch
it.  Each carries the offending parameter, its value and the valid range as
fields, so a panel or the CLI can show them without parsing the message.
"""

from __future__ import annotations


class DesignError(ValueError):
    """A design value, record or request the kit cannot accept.

    Parameters
    ----------
    message : str
        What is wrong, in a sentence a designer can act on.
    parameter : str, optional
        Name of the parameter (or record field) at fault.
    value : object, optional
        The value that was given.
    valid : str, optional
        The valid range or set, in words (``"> 0 Ω"``, ``"one of npn, pnp"``).

    Examples
    --------
    >>> err = DesignError("resistor must be positive", parameter="r_e",
    ...                   value=-1.0, valid="> 0 Ω")
    >>> str(err)
    'r_e = -1.0: resistor must be positive (valid: > 0 Ω)'
    >>> err.parameter
    'r_e'
    """

    def __init__(self, message, *, parameter=None, value=None, valid=None):
        self.message = message
        self.parameter = parameter
        self.value = value
        self.valid = valid
        super().__init__(self._compose())

    def _compose(self):
        text = self.message
        if self.parameter is not None:
            head = self.parameter if self.value is None else f"{self.parameter} = {self.value!r}"
            text = f"{head}: {text}"
        if self.valid is not None:
            text = f"{text} (valid: {self.valid})"
        return text

    def to_dict(self):
        """Plain fields for JSON output."""
        return {
            "error": type(self).__name__,
            "message": self.message,
            "parameter": self.parameter,
            "value": None if self.value is None else str(self.value),
            "valid": self.valid,
        }


class ParameterError(DesignError):
    """A single parameter value is malformed or out of its valid range."""


class RecordError(DesignError):
    """A design record file is malformed (the parameter is the record field)."""


class OperatingPointError(DesignError):
    """The design does not bias its transistors the way the topology needs.

    Raised for a load voltage outside compliance, a supply too low to turn
    the circuit on, and similar; ``parameter`` names the input to change.
    """


class ConvergenceError(DesignError):
    """The exact solve did not converge for the reported points."""


class ExpressionError(DesignError):
    """A symbolic expression cannot be compiled (e.g. it has unbound symbols)."""
