"""Notebook plumbing: BokehJS loaded inline, once per kernel.

A live ``jupyter_bokeh.BokehModel`` renders in JupyterLab 4 only when BokehJS
is on the page, and the page must not depend on a CDN (reviewers and this
project work offline), so the panels load it from ``bokeh.resources.INLINE``.
"""

from __future__ import annotations

_loaded = False


def load_bokeh(force=False):
    """Put BokehJS on the notebook page (inline, no CDN); later calls do nothing."""
    global _loaded
    if _loaded and not force:
        return
    from bokeh.io import output_notebook
    from bokeh.resources import INLINE

    output_notebook(resources=INLINE, hide_banner=True)
    _loaded = True
