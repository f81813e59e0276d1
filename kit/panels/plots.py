"""The five Bokeh figures of the design panel, built once and refilled in place.

:func:`build` makes the figures and their ColumnDataSources; :func:`fill`
assigns new columns to the existing sources (``source.data = {...}``) and
updates axis texts and category orders, so a live BokehModel redraws
without re-creating anything.  :func:`build` with data also serves the
static copies a report draws.
"""

from __future__ import annotations

import numpy as np
from bokeh.models import (ColumnDataSource, CustomAction, CustomJS, DataRange1d, FactorRange, HoverTool,
                          LabelSet, Span)
from bokeh.plotting import figure

from kit.panels import theme
from kit.panels.export import TIPS, add_svg_action, icon, style_png_button
from kit.panels.curves import SOURCES

FIGURES = ("load", "beta", "temp", "sensitivity", "tempco")
# No wheel zoom: in a notebook the wheel scrolls the page, and a seventh button folds
# the exports into a menu on the load plot.
TOOLS = "pan,box_zoom,reset,save"


def _empty_sources():
    return {name: ColumnDataSource(data={}) for name in SOURCES}


AXIS_GUTTER = 78  # px: the y axis with its label and tick labels up to six characters


def _curve_figure(height=theme.PLOT_HEIGHT, **kwargs):
    # A fixed left gutter wide enough for any tick label: a new range whose labels are
    # wider ("950" -> "1000") then repaints the plot once instead of laying it out again.
    fig = figure(width=theme.PLOT_WIDTH, height=height, tools=TOOLS, min_border_left=AXIS_GUTTER, **kwargs)
    return theme.style_figure(fig)


def _point(fig, source, label="design point"):
    fig.scatter("x", "y", source=source, size=9, marker="circle", fill_color="white",
                line_color=theme.INK, line_width=2.5, legend_label=label)


def _band(fig, source, label):
    fig.quad(left="left", right="right", bottom="bottom", top="top", source=source,
             fill_color=theme.SPEC_BAND, fill_alpha=0.6, line_color=None, legend_label=label,
             level="underlay")


def _load_figure(src):
    # The vertical range follows the compliance-edge segments, whose ends the data
    # module sets from the curves inside compliance: no range message per update.
    fig = _curve_figure(theme.LOAD_HEIGHT, y_range=DataRange1d(range_padding=0))
    fig.quad(left="left", right="right", bottom="bottom", top="top", source=src["load_outside"],
             fill_color=theme.OUTSIDE, fill_alpha=0.25, hatch_pattern="/", hatch_color=theme.OUTSIDE,
             hatch_alpha=0.8, line_color=None, legend_label="a part leaves its working region",
             level="underlay")
    edges = fig.segment(x0="x", x1="x", y0="y0", y1="y1", source=src["load_edges"], line_color=theme.EDGE,
                        line_dash="dashed", line_width=1.5, legend_label="compliance edges")
    fig.y_range.renderers = [edges]
    fig.add_layout(LabelSet(x="x", y="y_text", text="text", source=src["load_edges"], x_offset="offset",
                            y_offset="lift", text_align="align", text_font_size="10px", text_color=theme.EDGE))
    fig.multi_line(xs="xs", ys="ys", source=src["load_forms"], line_color="colour", line_dash="dash",
                   line_width=2, legend_field="legend")
    exact = fig.line("v_load", "y", source=src["load"], line_color=theme.INK, line_width=3,
                     legend_label="exact solve")
    fig.add_tools(HoverTool(renderers=[exact], name="hover", mode="vline",
                            tooltips=[("V_load", "@v_load{0.000} V"), ("I_out", "@y{0.000} A")]))
    _point(fig, src["load_point"])
    theme.style_legend(fig)
    legend = fig.legend[0]
    fig.center.remove(legend)  # below the plot: seven entries would hide the curves
    legend.ncols = 2
    legend.spacing = 3  # a hand formula's entry may take two or three lines: keep entries apart
    legend.location = "top_left"
    fig.add_layout(legend, "below")
    return fig


def _beta_figure(src):
    fig = _curve_figure(theme.PLOT_HEIGHT + theme.LEGEND_ROWS)
    _band(fig, src["beta_band"], "spec range")
    line = fig.line("beta", "y", source=src["beta"], line_color=theme.INK, line_width=3, legend_label="exact solve")
    fig.add_tools(HoverTool(renderers=[line], name="hover", mode="vline",
                            tooltips=[("β_F", "@beta{0.0}"), ("I_out", "@y{0.000} A")]))
    _point(fig, src["beta_point"])
    _legend_below(fig)
    return fig


def _temp_figure(src):
    fig = _curve_figure(theme.PLOT_HEIGHT + theme.LEGEND_ROWS)
    _band(fig, src["temp_band"], "spec range")
    line = fig.line("temp_c", "y", source=src["temp"], line_color=theme.INK, line_width=3,
                    legend_label="exact, junctions at ambient")
    fig.add_tools(HoverTool(renderers=[line], name="hover", mode="vline",
                            tooltips=[("temperature", "@temp_c{0.0} °C"), ("I_out", "@y{0.000} A")]))
    fig.line("temp_c", "y", source=src["temp_heated"], line_color=theme.HEATED, line_width=2,
             line_dash="dashed", legend_label="exact, with self-heating")
    _point(fig, src["temp_point"])
    _legend_below(fig)
    return fig


def _legend_below(fig):
    """The legend in two columns under the plot: in a corner it hid a falling curve's start."""
    theme.style_legend(fig, "top_left")
    legend = fig.legend[0]
    fig.center.remove(legend)
    legend.ncols = 2
    legend.spacing = 3
    fig.add_layout(legend, "below")


def _bar_figure(source, factors, tooltips):
    fig = figure(width=theme.PLOT_WIDTH, height=theme.BAR_HEIGHT, tools="reset,save",
                 y_range=FactorRange(factors=list(factors)), x_axis_label="", y_axis_label="")
    theme.style_figure(fig)
    bars = fig.hbar(y="name", right="value", left=0, height=0.65, source=source, fill_color="colour",
                    line_color=None)
    fig.add_tools(HoverTool(renderers=[bars], name="hover", tooltips=tooltips))
    fig.add_layout(Span(location=0, dimension="height", line_color="#555555", line_width=1))
    fig.add_layout(LabelSet(x="value", y="name", text="text", source=source, x_offset="offset",
                            y_offset=-5, text_align="anchor", text_font_size="10px", text_color="#333333"))
    fig.ygrid.grid_line_color = None
    fig.x_range.range_padding = 0.6  # room for the value labels beside the bars, either side
    fig.min_border_right = 24
    return fig


# What each figure's CSV holds: (source, column, header), SI units in the headers.
CSV_COLUMNS = {
    "load": [("load", "v_load", "V_load (V)"), ("load", "i_out", "I_out exact (A)")],
    "beta": [("beta", "beta", "beta_F"), ("beta", "i_out", "I_out exact (A)")],
    "temp": [("temp", "temp_c", "temperature (degC)"), ("temp", "i_out", "I_out exact (A)"),
             ("temp_heated", "i_out", "I_out self-heated (A)")],
    "sensitivity": [("sensitivity", "name", "parameter"), ("sensitivity", "value", "S (normalised)"),
                    ("sensitivity", "derivative", "dI_out/dp")],
    "tempco": [("tempco", "name", "mechanism"), ("tempco", "value", "contribution (ppm/K)")],
}
FORMS_CSV = {"load": "load_forms"}  # the hand formulas' currents, one column each (A)

# Runs in the browser on the plot's own data: no round trip through the kernel.
_CSV_JS = r"""
const quote = (v) => {
  const t = (v === null || v === undefined || (typeof v === 'number' && isNaN(v))) ? '' : String(v);
  return /[",\n]/.test(t) ? '"' + t.replace(/"/g, '""') + '"' : t;
};
const cols = columns.map(([k, key, head]) => [head, Array.from(sources[k].data[key] || [])]);
if (forms !== null) {
  const labels = forms.data.label || [];
  for (let j = 0; j < labels.length; j++) cols.push([labels[j] + ' (A)', Array.from(forms.data.i_out[j])]);
}
const rows = Math.max(0, ...cols.map((c) => c[1].length));
const lines = [cols.map((c) => quote(c[0])).join(',')];
for (let r = 0; r < rows; r++) lines.push(cols.map((c) => quote(c[1][r])).join(','));
const blob = new Blob([lines.join('\n') + '\n'], {type: 'text/csv'});
const link = document.createElement('a');
link.href = URL.createObjectURL(blob);
link.download = filename;
document.body.appendChild(link);
link.click();
link.remove();
"""


def add_csv_action(fig, filename, sources, columns, forms=None):
    """Add a toolbar button saving ``columns`` (``(source, column, header)``) of ``sources`` as CSV."""
    used = {k for k, _, _ in columns}
    callback = CustomJS(args={"sources": {k: sources[k] for k in used}, "columns": [list(c) for c in columns],
                              "forms": forms, "filename": filename}, code=_CSV_JS)
    fig.add_tools(CustomAction(icon=icon("CSV"), description=TIPS["CSV"], callback=callback, name="csv"))


def _add_csv_action(fig, name, sources):
    add_csv_action(fig, f"biasbook-{name}.csv", sources, CSV_COLUMNS[name],
                   sources[FORMS_CSV[name]] if name in FORMS_CSV else None)


def name_save_tool(fig):
    """Show on the plot's own save button that it writes PNG (beside the SVG and CSV ones).

    The hover stays on without a button of its own: a toolbar longer than the
    plot folds its last buttons (the exports) into a menu.
    """
    style_png_button(fig)
    for tool in fig.tools:
        if type(tool).__name__ == "HoverTool":
            tool.visible = False


def csv_text(name, sources, columns=None):
    """The CSV the plot ``name``'s download button writes, from the same ``sources`` (for scripts and tests).

    ``columns`` (``(source, column, header)`` triples) defaults to the design plots' :data:`CSV_COLUMNS`.
    """
    import csv
    import io

    columns = CSV_COLUMNS[name] if columns is None else columns
    cols = [(head, list(sources[k].data.get(key, []))) for k, key, head in columns]
    if name in FORMS_CSV and columns is CSV_COLUMNS[name]:
        forms = sources[FORMS_CSV[name]].data
        cols += [(f"{label} (A)", list(ys)) for label, ys in zip(forms.get("label", []), forms.get("i_out", []))]
    out = io.StringIO()
    writer = csv.writer(out, lineterminator="\n")
    writer.writerow([head for head, _ in cols])
    for r in range(max((len(c) for _, c in cols), default=0)):
        writer.writerow(["" if r >= len(c) or _missing(c[r]) else _cell(c[r]) for _, c in cols])
    return out.getvalue()


def _missing(value):
    return isinstance(value, float) and not np.isfinite(value)


def _cell(value):
    return repr(float(value)) if isinstance(value, (float, np.floating)) else str(value)


def build(data=None):
    """New figures and sources; filled with ``data`` (a :class:`PlotData`) if given.

    Returns
    -------
    figures : dict
        Name (one of :data:`FIGURES`) -> bokeh figure.
    sources : dict
        Source name -> ColumnDataSource.
    """
    sources = _empty_sources()
    figures = {"load": _load_figure(sources), "beta": _beta_figure(sources), "temp": _temp_figure(sources),
               "sensitivity": _bar_figure(sources["sensitivity"], [], [
                   ("p", "@name (at @at)"), ("S", "@value{+0.000}"), ("dI_out/dp", "@derivative")]),
               "tempco": _bar_figure(sources["tempco"], [], [("mechanism", "@name"), ("share", "@with_unit")])}
    for name, fig in figures.items():
        _add_csv_action(fig, name, sources)
        add_svg_action(fig, f"biasbook-{name}.svg")
        name_save_tool(fig)
    if data is not None:
        fill(figures, sources, data)
    return figures, sources


def fill(figures, sources, data):
    """Put ``data`` into the existing sources and axis texts (in place)."""
    for name, source in sources.items():
        columns = data.columns.get(name, {})
        if not _same(source.data, columns):  # an unchanged source costs a patch message too
            source.data = {key: _binary(value) for key, value in columns.items()}
    for name, texts in data.labels.items():
        fig = figures[name]
        # Set only what changed: setting a Bokeh property costs its validation even when equal.
        _set(fig.title, "text", texts["title"])
        for axes, text in ((fig.xaxis, texts["x"]), (fig.yaxis, texts["y"])):
            for axis in axes:
                _set(axis, "axis_label", text)
    for name, factors in data.factors.items():
        if list(figures[name].y_range.factors) != list(factors):
            figures[name].y_range.factors = list(factors)
    unit = data.scale[1]
    for fig in (figures["load"], figures["beta"], figures["temp"]):
        hover = next(t for t in fig.toolbar.tools if t.name == "hover")  # select_one walks every model: slow
        tips = [(k, v.rsplit(" ", 1)[0] + f" {unit}" if k == "I_out" else v) for k, v in hover.tooltips]
        if tips != list(hover.tooltips):  # the current's prefix follows the design (µA, mA)
            hover.tooltips = tips
    for fig in figures.values():
        for legend in fig.legend:
            for item in legend.items:
                # An empty curve (no spec band, no self-heating) keeps no legend entry.
                _set(item, "visible", any(_size(r.data_source) for r in item.renderers))


def _set(model, attr, value):
    if getattr(model, attr) != value:
        setattr(model, attr, value)


def _same(old, new):
    if old.keys() != new.keys():
        return False
    for key, value in new.items():
        a, b = old[key], value
        if len(a) != len(b):
            return False
        try:
            if not np.array_equal(np.asarray(a), np.asarray(b), equal_nan=True):
                return False
        except (TypeError, ValueError):  # ragged (multi-line) or text columns
            if list(map(_plain, a)) != list(map(_plain, b)):
                return False
    return True


def _binary(column):
    """Numbers as a float array (sent to the browser as a binary buffer, not JSON)."""
    if isinstance(column, list) and column and all(isinstance(v, (int, float, np.number)) and not
                                                     isinstance(v, bool) for v in column):
        return np.asarray(column, dtype=float)
    return column


def _plain(value):
    return value.tolist() if isinstance(value, np.ndarray) else value


def _size(source):
    return max((len(column) for column in source.data.values()), default=0)
