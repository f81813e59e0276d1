"""Show the kit's results in Jupyter through the report layer.

Result objects hold numbers only; IPython's display formatters are told,
by class name, to render them with :mod:`kit.report` (registered lazily:
nothing is imported until a result is shown).  :func:`register` runs when
``kit`` is imported inside an IPython session.
"""

from __future__ import annotations

from kit.report import RENDERERS


def _formatter(what):
    def render(result):
        from kit import report

        return getattr(report, what)(result)

    return render


def register(shell=None):
    """Register HTML (and LaTeX where there is one) for every result type with IPython."""
    if shell is None:
        try:
            from IPython import get_ipython
        except ImportError:
            return False
        shell = get_ipython()
    if shell is None:
        return False
    formatters = shell.display_formatter.formatters
    for (module, name), renderer in RENDERERS.items():
        formatters["text/html"].for_type_by_name(module, name, _formatter("html"))
        if renderer == "kit.report.evaluation":
            formatters["text/latex"].for_type_by_name(module, name, _formatter("latex"))
    return True
