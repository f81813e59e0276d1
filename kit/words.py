"""The named simplifications of hand analysis, registered where they are first needed.

A closed form is declared with the assumptions it makes (``no_early``,
``base_current_neglected``, ...).  Each assumption is worded once, by the
module that first needs it (a device kind words its own, a shared block or
a topology the rest), and says which operating symbols a form made under it
must not contain: a form tagged "no Early effect" has no ``V_A``, one tagged
"base currents neglected" no ``β``.  The code generator checks every form
against its tags.

Examples
--------
>>> a = assumption("example_ideal", "an example that drops X", excludes=("X_",))
>>> a.allows("Y_Q1"), a.allows("X_Q1")
(True, False)
>>> ASSUMPTIONS["example_ideal"] is a
True
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class Assumption:
    """One named simplification.

    Parameters
    ----------
    key : str
        The name closed forms are tagged with.
    text : str
        How reports word it.
    excludes : tuple of str
        Prefixes of operating-symbol names a closed form under this
        assumption must not contain (``"V_A_"`` for no Early effect).
    requires : tuple of str
        Prefixes of which a form under this assumption must contain at least
        one symbol each (``"V_BE_on"`` for a fixed V_BE).
    """

    key: str
    text: str
    excludes: tuple = ()
    requires: tuple = ()

    def allows(self, symbol_name):
        """Whether a form under this assumption may contain the operating symbol ``symbol_name``."""
        return not symbol_name.startswith(self.excludes)

    def problems(self, symbol_names):
        """What a form with these operating symbols breaks of this assumption (empty if nothing)."""
        out = [f"contains {n}" for n in sorted(symbol_names) if not self.allows(n)]
        out += [f"has no {prefix}" for prefix in self.requires
                if not any(n.startswith(prefix) for n in symbol_names)]
        return out


ASSUMPTIONS: dict = {}


def assumption(key, text, excludes=(), requires=()):
    """Register (once) and return the assumption ``key``.

    Registering the same key again with the same wording returns the first
    one; a different wording is a programming error.
    """
    made = Assumption(key, text, tuple(excludes), tuple(requires))
    known = ASSUMPTIONS.setdefault(key, made)
    if known != made:
        raise ValueError(f"assumption {key!r} is worded twice: {known.text!r} and {text!r}")
    return known


# Circuit-wide simplifications that belong to no single kind of part.
ISOTHERMAL = assumption(
    "isothermal", "all junctions at one temperature (no self-heating or gradient between them)")
