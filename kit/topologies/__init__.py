"""The registry of supported topologies, one module per family.

Every module in this package that defines ``TOPOLOGIES`` (a tuple) or
``TOPOLOGY`` is registered; listings follow each topology's ``order``.

>>> from kit import topologies
>>> topologies.all_topologies()[0].key
'divider_source'
"""

from __future__ import annotations

import importlib
import pkgutil

from kit.errors import ParameterError


def _discover():
    found = []
    for info in pkgutil.iter_modules(__path__):
        if info.name == "base":
            continue
        module = importlib.import_module(f"{__name__}.{info.name}")
        found += list(getattr(module, "TOPOLOGIES", ())) or (
            [module.TOPOLOGY] if hasattr(module, "TOPOLOGY") else [])
    found.sort(key=lambda t: (t.order, t.key))
    registry = {}
    for topology in found:
        if topology.key in registry:
            raise RuntimeError(f"two topologies are named {topology.key}")
        registry[topology.key] = topology
    return registry


_REGISTRY = _discover()


def all_topologies():
    """Every topology, in listing order."""
    return list(_REGISTRY.values())


def get(key):
    """The topology named ``key``; a clear error lists the valid names."""
    try:
        return _REGISTRY[key]
    except (KeyError, TypeError):
        raise ParameterError("unknown topology", parameter="topology", value=key,
                             valid=", ".join(_REGISTRY)) from None
