"""Views of a design against its spec: the worst case, and the standard-value search.

:class:`WorstCaseView` runs :func:`kit.analysis.worstcase.worst_case` on the
panel's present design and shows the Monte Carlo histogram (from the
running histogram the analysis keeps in ``MethodResult.arrays``) with the spec limits
and the yield, the table of the three methods and the error budget.
:class:`SynthesisView` runs :func:`kit.analysis.synthesis.synthesize` and
lists the ranked candidates, each with a button that loads it into the
design panel.  Both run on request: they take seconds, not milliseconds.
"""

from __future__ import annotations

import ipywidgets as widgets
import numpy as np

from kit.report import tables as display
from kit.report.worstcase import box_lines
from kit.analysis.synthesis import synthesize
from kit.analysis.worstcase import worst_case
from kit.errors import DesignError
from kit.panels import theme
from kit.panels.export import add_svg_action
from kit.panels.plots import add_csv_action, csv_text, name_save_tool
from kit.panels.stress import stress_html
from kit.quantities import format_quantity

HISTOGRAM_BINS = 40
# What each worst-case figure's CSV holds: (source, column, header), SI units in the headers.
CSV_COLUMNS = {
    "histogram": [("histogram", "low", "I_out bin low (A)"), ("histogram", "high", "I_out bin high (A)"),
                  ("histogram", "top", "samples")],
    "budget": [("budget", "name", "factor"), ("budget", "share", "share of the summed swings (%)"),
               ("budget", "swing", "swing of I_out alone (A)")],
}
_CELL = "padding:2px 10px;border-bottom:1px solid #d8d8d8"
_KEEP = _CELL + ";white-space:nowrap"
_NUMBER = _KEEP + ";text-align:right;font-variant-numeric:tabular-nums"


def _verdict(passed):
    colour = theme.PASS_COLOUR if passed else theme.FAIL_COLOUR
    return f'<span style="color:{colour};font-weight:600">{"pass" if passed else "fail"}</span>'


def _status(text, error=False):
    colour = theme.FAIL_COLOUR if error else "#444"
    return f'<span style="color:{colour}">{display.escape(text)}</span>'


def histogram_columns(result, scale):
    """Histogram bars of the Monte Carlo currents that stayed in the needed regions (every sample).

    The analysis keeps a fine running histogram, not the samples; the bars
    join its bins, so each count is exact.
    """
    mc = result.methods["Monte Carlo"]
    counts, edges = mc.arrays["histogram"].coarse(HISTOGRAM_BINS)
    lo, hi = result.spec.limits
    if counts.size == 0:
        return {"left": [], "right": [], "top": [], "colour": [], "low": [], "high": []}
    centres = 0.5 * (edges[:-1] + edges[1:])
    inside = (centres >= lo) & (centres <= hi)
    return {"left": edges[:-1] / scale, "right": edges[1:] / scale, "top": counts,
            "colour": np.where(inside, theme.RAISES, theme.FAIL_COLOUR).tolist(),
            "low": edges[:-1], "high": edges[1:]}  # in A, for the CSV


class WorstCaseView:
    """Worst case of the panel's design against ``spec`` (run with :meth:`run`)."""

    def __init__(self, panel, spec):
        from bokeh.models import ColumnDataSource, FactorRange, HoverTool, LabelSet
        from bokeh.plotting import figure
        from jupyter_bokeh.widgets import BokehModel

        self.panel = panel
        self.spec = spec
        self.result = None
        self.sources = {"histogram": ColumnDataSource(data={"left": [], "right": [], "top": [], "colour": [],
                                                            "low": [], "high": []}),
                        "limits": ColumnDataSource(data={"x": [], "y1": [], "text": [], "align": [],
                                                         "offset": []}),
                        "budget": ColumnDataSource(data={"name": [], "share": [], "text": [], "swing": []})}
        # Box zoom and reset only beside the exports: on a plot this short a longer toolbar
        # folds its last buttons (the SVG one) into a menu.
        hist = figure(width=theme.PLOT_WIDTH, height=theme.PLOT_HEIGHT, tools="box_zoom,reset,save",
                      title="Monte Carlo: not run yet", x_axis_label="I_out", y_axis_label="samples")
        bars = hist.quad(left="left", right="right", bottom=0, top="top", source=self.sources["histogram"],
                         fill_color="colour", line_color="white",
                         legend_label="solved samples (red: outside the limits)")
        self.hist_hover = HoverTool(renderers=[bars], tooltips=[("I_out", "@left{0.000} … @right{0.000} A"),
                                                                ("samples", "@top")])
        hist.add_tools(self.hist_hover)
        hist.segment(x0="x", x1="x", y0=0, y1="y1", source=self.sources["limits"], line_color=theme.LIMIT,
                     line_width=2, line_dash="dashed", legend_label="spec limits")
        # Each label inside its limit (the high one to its left), never past the plot's edge.
        hist.add_layout(LabelSet(x="x", y="y1", text="text", source=self.sources["limits"], x_offset="offset",
                                 text_align="align", text_baseline="top", text_font_size="10px",
                                 text_color=theme.LIMIT))  # hangs from the top of its line, inside the frame
        theme.style_legend(theme.style_figure(hist))
        legend = hist.legend[0]
        hist.center.remove(legend)  # below: the limit labels sit in the plot's top corners
        legend.orientation = "horizontal"
        legend.spacing = 18  # side by side, the entries need air between them
        hist.add_layout(legend, "below")
        budget = figure(width=theme.PLOT_WIDTH, height=theme.PLOT_HEIGHT, tools="save",
                        y_range=FactorRange(factors=[]), title="Error budget: each factor alone (exact solve)",
                        x_axis_label="share of the summed swings (%)", y_axis_label="factor")
        shares = budget.hbar(y="name", right="share", left=0, height=0.65, source=self.sources["budget"],
                             fill_color=theme.RAISES, line_color=None)
        budget.add_tools(HoverTool(renderers=[shares], tooltips=[("factor", "@name"), ("share", "@share{0.0} %"),
                                                                 ("swing of I_out", "@text")]))
        budget.add_layout(LabelSet(x="share", y="name", text="text", source=self.sources["budget"], x_offset=4,
                                   y_offset=-5, text_font_size="10px"))
        budget.x_range.range_padding = 0.35
        theme.style_figure(budget)
        self.figures = {"histogram": hist, "budget": budget}
        for name, fig in self.figures.items():
            add_csv_action(fig, f"biasbook-{name}.csv", self.sources, CSV_COLUMNS[name])
            add_svg_action(fig, f"biasbook-{name}.svg")
            name_save_tool(fig)
        self.button = widgets.Button(description="check against the spec", button_style="primary",
                                     layout=widgets.Layout(width="220px"))
        self.button.on_click(lambda _: self.run())
        self.status = widgets.HTML(_status("Not run yet: the analysis takes a few seconds."))
        self.table = widgets.HTML()
        self.stress = widgets.HTML(layout=widgets.Layout(width="100%"))
        self.bokeh = {"histogram": BokehModel(hist), "budget": BokehModel(budget)}
        self._drawn = None  # the result the BokehModels were last sent with
        # Hidden until a run fills them: no empty plot boxes.
        self.plots = widgets.Box(list(self.bokeh.values()), layout=widgets.Layout(display="none", flex_flow="row wrap"))
        self.widget = widgets.VBox([widgets.HBox([self.button, self.status]), self.table, self.plots,
                                    self.stress])
        panel.on_change(self._design_changed)

    def run(self):
        """Analyse the panel's present design; returns the WorstCase, or None if refused."""
        design = self.panel.design
        self.status.value = _status("Running …")
        try:
            result = worst_case(design, self.spec, network=self.panel.network_for(design))
        except DesignError as err:
            self.status.value = _status(f"Not run: {err}", error=True)
            return None
        self.result = result
        scale, unit = theme.current_scale(self.spec.i_target)
        mc = result.methods["Monte Carlo"]
        columns = histogram_columns(result, scale)
        top = max(list(columns["top"]) or [1])
        lo, hi = self.spec.limits
        self.sources["histogram"].data = columns
        self.sources["limits"].data = {"x": [lo / scale, hi / scale], "y1": [top * 1.05] * 2,
                                       "text": ["low limit", "high limit"], "align": ["left", "right"],
                                       "offset": [3, -3]}
        ranked = sorted(result.budget, key=lambda b: b.share)
        self.sources["budget"].data = {"name": [b.label for b in ranked], "share": [100 * b.share for b in ranked],
                                       "text": [format_quantity(b.swing, "A") for b in ranked],
                                       "swing": [b.swing for b in ranked]}
        self.figures["budget"].y_range.factors = [b.label for b in ranked]
        hist = self.figures["histogram"]
        hist.xaxis.axis_label = f"I_out ({unit})"
        self.hist_hover.tooltips = [("I_out", f"@left{{0.000}} … @right{{0.000}} {unit}"), ("samples", "@top")]
        hist.title.text = (f"Monte Carlo: {mc.detail['samples']} samples × {mc.detail['condition_points']} "
                           f"condition points; yield {mc.detail['yield']:.2%}")
        self.table.value = self._table_html(result)
        self.stress.value = stress_html(result)
        self.plots.layout.display = "flex"
        self.status.value = _status(f"Result for the design as it is now ({self._values_text(design)}).")
        return result

    def csv(self, name):
        """The numbers of worst-case plot ``name`` (``"histogram"``, ``"budget"``) as CSV text."""
        return csv_text(name, self.sources, CSV_COLUMNS[name])

    def refresh_drawings(self, force=False):
        """Re-send both drawings whole if a run changed them since (see DesignPanel.refresh_drawings)."""
        if force or self._drawn is not self.result:
            for name, model in self.bokeh.items():
                model.update_from_model(self.figures[name])
            self._drawn = self.result

    def _design_changed(self, panel):
        if self.result is not None and panel.design != self.result.design:
            self.status.value = _status("The design has changed since this result: check again.", error=True)

    @staticmethod
    def _values_text(design):
        return ", ".join(f"{v.name} {format_quantity(design.values[v.name], v.unit, 4)}"
                         for v in design.topology.values if v.kind == "resistor") or design.topology.key

    @staticmethod
    def _table_html(result):
        rows = []
        for m in result.methods.values():
            extra = f", yield {m.detail['yield']:.2%}" if "yield" in m.detail else ""
            # A number and its unit on one line; only the "how" words wrap on a narrow screen.
            rows.append(f'<tr><td style="{_KEEP}">{display.escape(m.method)}</td>'
                        f'<td style="{_NUMBER}">{format_quantity(m.low, "A", 4)}</td>'
                        f'<td style="{_NUMBER}">{format_quantity(m.high, "A", 4)}</td>'
                        f'<td style="{_NUMBER}">{m.margin:+.2%}</td>'
                        f'<td style="{_KEEP}">{_verdict(m.passed)}{extra}</td>'
                        f'<td style="{_CELL};color:#555">{display.escape(m.detail.get("how", ""))}</td></tr>')
        lo, hi = result.spec.limits
        head = "".join(f'<th style="{_KEEP};background:#eef2f5;text-align:left">{h}</th>'
                       for h in ("method", "lowest", "highest", "margin", "verdict", "how"))
        reasons = "".join(f"<li>{display.escape(r)}</li>" for r in result.reasons())
        # Every verdict says over what it holds (record text escaped).
        over = "".join(f"<li>{display.escape(line)}</li>" for line in box_lines(result))
        verdict = ("spec met: the extreme-value bound lies inside the limits" if result.met
                   else "spec not met")
        return (f'<div style="font-family:{theme.FONT};font-size:13px">'
                f"<p>Spec {format_quantity(result.spec.i_target, 'A', 4)} ± {result.spec.tolerance:.2%} "
                f"({format_quantity(lo, 'A', 4)} … {format_quantity(hi, 'A', 4)}); nominal "
                f"{format_quantity(result.nominal, 'A', 4)}; self-heating "
                f"{'included' if result.self_heating else 'not included'}.</p>"
                f'<table style="border-collapse:collapse"><tr>{head}</tr>{"".join(rows)}</table>'
                f"<p>{_verdict(result.met)} — {verdict}</p>" + (f"<ul>{reasons}</ul>" if reasons else "")
                + (f'<p style="margin-bottom:2px">Over the spec\'s box (defaults it applied marked):</p>'
                   f'<ul style="margin-top:0">{over}</ul>' if over else "")
                + "</div>")


class SynthesisView:
    """Standard-value designs meeting ``spec``, each loadable into the panel.

    Parameters
    ----------
    panel : kit.panels.DesignPanel
    spec : kit.analysis.spec.Spec
    topologies, polarities : sequence of str, optional
        What to try (default: the panel design's topology and polarity).
    """

    def __init__(self, panel, spec, topologies=None, polarities=None):
        self.panel = panel
        self.spec = spec
        self.topologies = list(topologies or [panel.design.topology.key])
        self.polarities = list(polarities or [panel.design.polarity])
        self.result = None
        self.load_buttons = []
        self.button = widgets.Button(description="search standard values", button_style="primary",
                                     layout=widgets.Layout(width="220px"))
        self.button.on_click(lambda _: self.run())
        self.status = widgets.HTML(_status(
            f"Tries {'; '.join(_circuit(t) for t in self.topologies)} ({', '.join(p.upper() for p in self.polarities)}) "
            "starting from the design as it is now; takes seconds per circuit."))
        self.rows = widgets.VBox()
        self.widget = widgets.VBox([widgets.HBox([self.button, self.status]), self.rows])

    def run(self):
        """Search; returns the Synthesis, or None if refused."""
        self.status.value = _status("Searching …")
        try:
            # From where the designer is: the values, parts and conditions it does not search are kept.
            result = synthesize(self.spec, start=self.panel.design, topologies=self.topologies,
                                polarities=self.polarities)
        except DesignError as err:
            self.status.value = _status(f"Not run: {err}", error=True)
            return None
        self.result = result
        self.load_buttons = []
        rows = []
        for rank, candidate in enumerate(result.candidates, 1):
            button = widgets.Button(description="load into the panel",
                                    layout=widgets.Layout(width="auto", min_width="170px", flex="0 0 auto"))
            button.on_click(lambda _, d=candidate.design: self.panel.load(d))
            self.load_buttons.append(button)
            rows.append(widgets.HBox([button, widgets.HTML(self._candidate_html(rank, candidate))]))
        for key, reasons in result.infeasible.items():
            rows.append(widgets.HTML(_status(f"{_circuit(key)} cannot meet the spec: {'; '.join(reasons)}",
                                             error=True)))
        self.rows.children = rows
        self.status.value = _status(f"{_count(len(result.candidates), 'candidate')} in {result.series} values, "
                                    "ranked by extreme-value margin.")
        return result

    @staticmethod
    def _candidate_html(rank, c):
        d = c.design
        values = ", ".join(f"{v.name} " + (format_quantity(d.values[v.name], v.unit, 4).replace(" ", "\u00a0")
                                            if v.unit else f"{d.values[v.name]:g}") for v in d.topology.values)
        return (f'<span style="font-family:{theme.FONT};font-size:13px"><b>{rank}. {display.escape(d.topology.title)} '
                f'({d.polarity.upper()})</b> {_verdict(c.passed)} margin {c.margin:+.2%}; nominal '
                f'{_amperes(c.nominal)}, worst case {_amperes(c.low)} … '
                f'{_amperes(c.high)}<br><span style="color:#555">{display.escape(values)}</span></span>')


def _amperes(value):
    """A current with its unit kept on the same line (a no-break space between them)."""
    return format_quantity(value, "A", 4).replace(" ", "\u00a0")


def _circuit(key):
    """A circuit's title for its key (``"basic_mirror"``, or ``"basic_mirror/npn"`` with its polarity)."""
    from kit import topologies

    name, _, polarity = key.partition("/")
    try:
        title = topologies.get(name).title
    except DesignError:
        return key
    return f"{title} ({polarity.upper()})" if polarity else title


def _count(n, noun):
    """``"no candidate"``, ``"1 candidate"``, ``"3 candidates"``."""
    return f"no {noun}" if n == 0 else f"{n} {noun}" + ("" if n == 1 else "s")
