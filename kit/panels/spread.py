"""One figure for :func:`kit.analysis.spread.spread`: I_out across the load range at each gain.

The curves are the spread result's own (``result.curves``); nothing is solved
here.  The compliance edges of the nominal design are marked where they fall
inside the drawn range, and the design's load voltage is marked on the
nominal curve.

Examples
--------
>>> import kit
>>> from kit.analysis.spread import spread
>>> fig = spread_figure(spread(kit.design("basic_mirror"), beta=(100, 300)))
>>> [r.name for r in fig.renderers if r.name]
['β low (100)', 'β nominal', 'β high (300)', 'design point']
"""

from __future__ import annotations

from bokeh.models import Span
from bokeh.plotting import figure

from kit.panels import theme
from kit.panels.export import add_svg_action, style_png_button

CURVES = (("low", "β low", theme.FORMS[0], "dashed"),
          ("nominal", "β nominal", theme.INK, "solid"),
          ("high", "β high", theme.FORMS[1], "dotdash"))


def spread_figure(result, *, width=theme.PLOT_WIDTH + 60, height=theme.PLOT_HEIGHT):
    """A Bokeh figure of ``result.curves`` (load voltage in V, current scaled to 1 … 999)."""
    factor, unit = theme.current_scale(result.i_out)
    v = result.curves["v_load"]
    fig = figure(width=width, height=height, tools="pan,box_zoom,reset,save",
                 title="Output current across the load range",
                 x_axis_label="load voltage (V)", y_axis_label=f"I_out ({unit})")
    theme.style_figure(fig)
    for key, label, colour, dash in CURVES:
        if key not in result.curves:
            continue
        name = _label(result, key, label)
        fig.line(v, result.curves[key] / factor, line_color=colour, line_dash=dash, line_width=2,
                 legend_label=name, name=name)
    for edge in (result.compliance.low, result.compliance.high):
        if v[0] <= edge.voltage <= v[-1]:
            fig.add_layout(Span(location=edge.voltage, dimension="height", line_color=theme.EDGE,
                                line_dash="dotted", line_width=1.5))
    fig.scatter([result.design.values["v_load"]], [result.i_out / factor], size=9, marker="circle",
                fill_color="white", line_color=theme.INK, line_width=2.5, legend_label="design point",
                name="design point")
    theme.style_legend(fig)
    # beside the plot, not over the curves
    fig.add_layout(fig.legend[0], "right")
    add_svg_action(fig, "biasbook-spread.svg")
    style_png_button(fig)
    return fig


def _label(result, key, label):
    """``"β = 80"`` for a corner; the nominal curve says it is nominal."""
    if result.beta_range is None:
        return "exact solve"
    if key == "nominal":
        return label
    value = result.beta_range[0 if key == "low" else 1]
    return f"{label} ({value:g})"
