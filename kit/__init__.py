"""biasbook: derive, solve and check transistor current sources and mirrors.

The package is light on import (no SymPy, Bokeh or Jupyter until a
derivation or a panel needs them).  Start with :func:`kit.design` and
:func:`kit.evaluate`:

>>> import kit
>>> d = kit.design("divider_source", r1="33k", r2="10k", r_e="2k2",
...                v_supply=12, v_load=8)
>>> ev = kit.evaluate(d)
>>> 0.9e-3 < ev.i_out < 1.3e-3
True
"""

__version__ = "0.1.0"

from kit.errors import DesignError  # noqa: E402


def _show_results_in_ipython():
    # Results hold numbers; in an IPython session their display goes through the
    # report layer.  Only when IPython is already loaded: a script imports nothing more.
    import sys

    if "IPython" in sys.modules:
        from kit.report.jupyter import register

        register()


_show_results_in_ipython()


def __getattr__(name):
    # Lazy public API: importing kit must stay cheap and pull in no GUI code.
    # Module names differ from these attribute names on purpose, so that
    # importing a submodule never shadows a function here.
    if name in ("design", "Design"):
        from kit.model import design

        return design.make_design if name == "design" else design.Design
    if name == "evaluate":
        from kit.analysis.evaluation import evaluate

        return evaluate
    if name in ("topology", "list_topologies"):
        from kit import topologies

        return topologies.get if name == "topology" else topologies.all_topologies
    raise AttributeError(f"module 'kit' has no attribute {name!r}")


__all__ = ["DesignError", "design", "Design", "evaluate", "topology", "list_topologies", "__version__"]
