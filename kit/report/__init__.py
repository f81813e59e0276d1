"""Reports: results (plain numbers from :mod:`kit.analysis`) put into words.

One report layer for every reader: the command line prints :func:`text`,
notebooks show :func:`html` (registered with IPython's display by
:mod:`kit.report.jupyter`), reviews print the same HTML, and LaTeX comes
from :func:`latex` where a result has one.  Record text reaches every
output escaped (:mod:`kit.safety`); tables come from one helper
(:mod:`kit.report.tables`); the safety words from :mod:`kit.report.cautions`.

Examples
--------
>>> import kit
>>> from kit import report
>>> print(report.text(kit.evaluate(kit.design("divider_source"))).splitlines()[0])
Divider-biased emitter-degenerated source (NPN)
"""

from __future__ import annotations

from importlib import import_module

# Result class (module, name) -> report module with its text/html/latex functions.
RENDERERS = {
    ("kit.analysis.evaluation", "Evaluation"): "kit.report.evaluation",
    ("kit.analysis.worstcase", "WorstCase"): "kit.report.worstcase",
    ("kit.analysis.synthesis", "Synthesis"): "kit.report.synthesis",
    ("kit.analysis.temperature", "TemperatureSweep"): "kit.report.temperature",
    ("kit.analysis.spread", "Spread"): "kit.report.spread",
    ("kit.analysis.derivation", "Derivation"): "kit.report.derivation",
    ("kit.topologies.base", "Topology"): "kit.report.topology",
}


def _renderer(result, what):
    cls = type(result)
    module = RENDERERS.get((cls.__module__, cls.__name__))
    function = getattr(import_module(module), what, None) if module else None
    if function is None:
        raise TypeError(f"no {what} report for {cls.__name__}")
    return function


def text(result):
    """Plain text of a result (what the command line prints)."""
    return _renderer(result, "text")(result)


def html(result):
    """HTML of a result (what a notebook and a review show)."""
    return _renderer(result, "html")(result)


def latex(result):
    """LaTeX of a result, where it has one."""
    return _renderer(result, "latex")(result)
