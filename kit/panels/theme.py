"""Colours, sizes and unit scaling shared by every panel view.

The palette is our own: a deep ink blue for the exact solve, warm earth
tones for the hand formulas, each also told apart by its dash pattern so a
grey-scale print stays readable.
"""

from __future__ import annotations

import math

INK = "#17324d"  # exact solve, present point
FORMS = ("#b5541c", "#3f7a3a", "#7b4a94", "#9a7b12", "#2b7c86", "#8c2f4b")
DASHES = ("dashed", "dotdash", "dotted", "dashdot", (6, 3, 1, 3), (2, 2))
HEATED = "#a03a2a"  # the self-heated temperature curve
OUTSIDE = "#caa7a0"  # shading where a part leaves its working region (forward active, saturation, ...)
EDGE = "#4d4d4d"  # compliance edges
SPEC_BAND = "#d9e4d0"  # spec range of a swept parameter
RAISES = "#2d6a8a"  # a positive sensitivity or tempco contribution
LOWERS = "#c07a35"  # a negative one
TOTAL = "#17324d"
LIMIT = "#8c2f4b"  # spec limits on the Monte Carlo histogram
PASS_COLOUR = "#2f6b3a"
FAIL_COLOUR = "#9c2c2c"

FONT = "Helvetica, Arial, sans-serif"
PLOT_WIDTH = 560
PLOT_HEIGHT = 300
LOAD_HEIGHT = 400  # the load plot carries its legend below
LEGEND_ROWS = 50  # px added to a plot that carries a two-row legend below its frame
BAR_HEIGHT = 300

_PREFIXES = {0: "", -3: "m", -6: "µ", -9: "n", -12: "p", -15: "f"}


def current_scale(amperes):
    """``(factor, unit)`` that shows a current near ``amperes`` as 1 … 999.

    Examples
    --------
    >>> current_scale(953e-6)
    (1e-06, 'µA')
    >>> current_scale(2.1e-3)
    (0.001, 'mA')
    """
    if not math.isfinite(amperes) or amperes == 0:
        return 1.0, "A"
    exponent = 3 * math.floor(math.log10(abs(amperes)) / 3)
    exponent = min(max(exponent, -15), 0)
    return 10.0 ** exponent, f"{_PREFIXES[exponent]}A"


def style_figure(fig):
    """Print-friendly axes: upright labels with units, light grid, readable ticks."""
    for axis in (fig.xaxis, fig.yaxis):
        axis.axis_label_text_font_style = "normal"
        axis.axis_label_text_font_size = "12px"
        axis.axis_label_text_font = FONT
        axis.major_label_text_font_size = "11px"
    fig.title.text_font_size = "13px"
    fig.title.text_font = FONT
    fig.grid.grid_line_color = "#e3e3e3"
    fig.outline_line_color = "#9a9a9a"
    fig.toolbar.logo = None
    return fig


# Defaults for every plot of a printed review: paper has no use for a toolbar,
# and the plotting library's logo is not the reviewer's business.  A theme sets
# only what a plot leaves unset, so it reaches the notebook's own figures too.
PRINT_THEME = {"attrs": {"Plot": {"toolbar_location": None}, "GridPlot": {"toolbar_location": None},
                         "Toolbar": {"logo": None}}}


def use_print_theme():
    """Show every plot from now on without toolbar or logo (for printed reviews).

    Examples
    --------
    What the theme does to a plot that leaves its toolbar unset:

    >>> from bokeh.document import Document
    >>> from bokeh.plotting import figure
    >>> from bokeh.themes import Theme
    >>> document, plot = Document(), figure()
    >>> document.theme = Theme(json=PRINT_THEME)
    >>> document.add_root(plot)
    >>> plot.toolbar_location, plot.toolbar.logo
    (None, None)
    """
    from bokeh.io import curdoc
    from bokeh.themes import Theme

    curdoc().theme = Theme(json=PRINT_THEME)


def style_legend(fig, location="bottom_right"):
    if fig.legend:
        legend = fig.legend[0]
        legend.location = location
        legend.label_text_font_size = "11px"
        legend.label_text_font = FONT
        legend.background_fill_alpha = 0.85
        legend.spacing = 0
        legend.padding = 4
        legend.glyph_width = 26
        legend.click_policy = "hide"
