"""Interactive Jupyter panels (ipywidgets + Bokeh through jupyter_bokeh).

Needs the ``notebooks`` extra.  Panels compute no physics: they call
:func:`kit.evaluate`, :func:`kit.evaluation.sweep` and the analyses, exactly
as a script would, and only draw what those return.

>>> import kit
>>> from kit.panels import DesignPanel
>>> panel = DesignPanel(kit.design("divider_source"))
>>> panel.update(r_e="2k0")
True

In a notebook, a bare ``panel`` in a cell shows it (BokehJS is loaded
inline the first time).  The submodules load lazily, so
``kit.panels.curves`` (the plot columns) works without importing Bokeh.
"""

from __future__ import annotations

__all__ = ["DesignPanel", "ComparePanel", "WorstCaseView", "SynthesisView", "load_bokeh"]


def __getattr__(name):
    if name == "DesignPanel":
        from kit.panels.design import DesignPanel

        return DesignPanel
    if name == "ComparePanel":
        from kit.panels.compare import ComparePanel

        return ComparePanel
    if name in ("WorstCaseView", "SynthesisView"):
        from kit.panels import worst

        return getattr(worst, name)
    if name == "load_bokeh":
        from kit.panels.notebook import load_bokeh

        return load_bokeh
    raise AttributeError(f"module 'kit.panels' has no attribute {name!r}")
