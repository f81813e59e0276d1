"""The registry of supported topologies, one module per family.

>>> from kit import topologies
>>> [t.key for t in topologies.all_topologies()][:1]
['divider_source']
"""

from __future__ import annotations

from kit.errors import ParameterError
from kit.topologies import divider

_REGISTRY = {t.key: t for t in (divider.TOPOLOGY,)}


def all_topologies():
    """Every topology, in the order the documentation lists them."""
    return list(_REGISTRY.values())


def get(key):
    """The topology named ``key``; a clear error lists the valid names."""
    try:
        return _REGISTRY[key]
    except (KeyError, TypeError):
        raise ParameterError("unknown topology", parameter="topology", value=key,
                             valid=", ".join(_REGISTRY)) from None
