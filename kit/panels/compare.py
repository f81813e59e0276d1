"""Two designs side by side: one table of both designs' numbers, overlaid curves, each design editable.

A question an engineer asks all the time — "what does the better circuit buy
me at this current?" (a differential-pair tail as a basic mirror or as a
Wilson mirror) — wants both answers in one place.  :class:`ComparePanel`
holds two :class:`kit.panels.DesignPanel` s, one per design, and uses only
their inputs (circuit, polarity, values, conditions, message line): every
edit goes through the design panel's own validate-then-show path, and every
number and curve here is the design panel's (the kit's evaluation and
sweeps).  Nothing is solved in this module.

The view reads top to bottom: the table (each row a quantity, a column per
design and one saying how the second compares with the first), the worst case
of both against the spec on request, the overlaid curves, then the two sets
of inputs side by side (they wrap one under the other on a narrow column).

Examples
--------
>>> import kit
>>> from kit.panels.compare import ComparePanel
>>> both = ComparePanel(kit.design("basic_mirror", i_ref="100u", n_area=1),
...                     kit.design("wilson_mirror", i_ref="100u"))
>>> [row[0] for row in both.rows()][:2]
['output current I_out', 'output resistance R_out']
>>> both.update("B", i_ref="120u")
True
"""

from __future__ import annotations

import math
import re

import ipywidgets as widgets
import numpy as np

from kit.analysis.worstcase import worst_case
from kit.errors import DesignError, ParameterError
from kit.panels import theme
from kit.panels.design import DesignPanel
from kit.panels.export import add_svg_action
from kit.panels.plots import add_csv_action, csv_text, name_save_tool
from kit.quantities import format_quantity
from kit.report import tables as display
from kit.report.evaluation import resistance
from kit.report.worstcase import stress_headline

SIDES = ("A", "B")
STYLE = {"A": (theme.INK, "solid"), "B": (theme.FORMS[0], "dashed")}
# plot -> (x column, x axis words, title); the columns are each design panel's own.
PLOTS = {"load": ("v_load", "load voltage V_load (V)", "I_out across the load voltage (dotted: compliance edges)"),
         "temp": ("temp_c", "ambient temperature (°C)", "I_out across the ambient temperature"),
         "beta": ("beta", "β_F of the output transistor (every β_F scaled alike)", "I_out across the forward gain")}
TAB_TITLES = {"load": "load", "temp": "temperature", "beta": "β_F"}
X_TIPS = {"load": ("V_load", "@v_load{0.000} V"), "temp": ("temperature", "@temp_c{0.0} °C"),
          "beta": ("β_F", "@beta{0.0}")}
_CELL = "padding:3px 10px;border-bottom:1px solid #d8d8d8;vertical-align:top"
CSV_COLUMNS = {
    "load": [("A_load", "v_load", "V_load A (V)"), ("A_load", "i_out", "I_out A (A)"),
             ("B_load", "v_load", "V_load B (V)"), ("B_load", "i_out", "I_out B (A)")],
    "temp": [("A_temp", "temp_c", "temperature A (degC)"), ("A_temp", "i_out", "I_out A (A)"),
             ("B_temp", "temp_c", "temperature B (degC)"), ("B_temp", "i_out", "I_out B (A)")],
    "beta": [("A_beta", "beta", "beta_F A"), ("A_beta", "i_out", "I_out A (A)"),
             ("B_beta", "beta", "beta_F B"), ("B_beta", "i_out", "I_out B (A)")],
}


def beta_sensitivity(evaluation):
    """``(β/I) dI/dβ`` with every bipolar transistor's β_F moving together, or None without one.

    The sum of the exact normalised sensitivities to each transistor's β_F
    (the kit's implicit-function derivatives, :attr:`Evaluation.derivatives`).
    """
    params = evaluation.design.parameters()
    names = [n for n in evaluation.derivatives if n.endswith(".beta_f")]
    if not names:
        return None
    return sum(params[n] * evaluation.derivatives[n] for n in names) / evaluation.i_out


def headroom(evaluation):
    """``(volts, edge word)``: how far the design's load voltage lies from the nearer compliance edge."""
    c = evaluation.compliance
    v = evaluation.design.values["v_load"]
    low, high = v - c.low.voltage, c.high.voltage - v
    return (low, "low edge") if low <= high else (high, "high edge")


# A digit, a space, then a unit (SI prefix and A, V, W, Ω; °C; ppm/K; K; %), not a word.
_NUMBER_UNIT = re.compile(r"(\d) (?=(?:[fpnµmkMG]?(?:A|V|W|Ω)|°C|ppm/K|K)(?![A-Za-z])|%)")


def keep_units(text):
    """``text`` with a no-break space between each number and the unit after it.

    A narrow column then wraps between words, never as "25.3 / °C".

    Examples
    --------
    >>> keep_units("Q2 at 11.9 V, T_j up to 25.3 °C") == "Q2 at 11.9\u00a0V, T_j up to 25.3\u00a0°C"
    True
    """
    return _NUMBER_UNIT.sub("\\1\u00a0", text)


def _relative(a, b):
    if not (math.isfinite(a) and math.isfinite(b)) or a == 0:
        return "—"
    return f"{b / a - 1:+.2%}"


def _ratio(a, b):
    if math.isinf(a) and math.isinf(b):
        return "both ideal"
    if not (math.isfinite(a) and math.isfinite(b)) or a == 0:
        return "—"
    return f"× {b / a:.3g}"


def _difference(a, b, unit):
    if not (math.isfinite(a) and math.isfinite(b)):
        return "—"
    text = format_quantity(b - a, unit, 3)
    return text if text.startswith("-") else "+" + text


class ComparePanel:
    """Two designs side by side (a bare ``panel`` in a cell shows it).

    Parameters
    ----------
    first, second : kit.model.design.Design
        The designs, called A and B; each must evaluate.
    spec : kit.analysis.spec.Spec, optional
        Adds the worst case of both against it (run on request) and the
        spec's ranges to the curves.

    Attributes
    ----------
    sides : dict
        ``"A"``/``"B"`` -> the :class:`kit.panels.DesignPanel` holding that design.
    results : dict
        ``"A"``/``"B"`` -> the last worst case (a ``WorstCase``) or None.
    sources, figures : dict
        The overlaid plots' Bokeh data and figures.
    widget : ipywidgets.VBox
    """

    def __init__(self, first, second, spec=None):
        self.spec = spec
        self.sides = {"A": DesignPanel(first, spec), "B": DesignPanel(second, spec)}
        self.results = {"A": None, "B": None}
        self._build_figures()
        self._build_widgets()
        for side, panel in self.sides.items():
            panel.on_change(lambda _panel, side=side: self._changed(side))
        self._show()

    # -- public API -------------------------------------------------------------------
    def design(self, side):
        return self.sides[self._side(side)].design

    def evaluation(self, side):
        return self.sides[self._side(side)].evaluation

    def update(self, side, **changes):
        """Change design ``side`` (``"A"`` or ``"B"``) as :meth:`DesignPanel.update` does; True if applied."""
        return self.sides[self._side(side)].update(**changes)

    def switch(self, side, topology=None, polarity=None):
        """Another circuit or polarity for design ``side``, carrying the shared values (see DesignPanel.switch)."""
        return self.sides[self._side(side)].switch(topology=topology, polarity=polarity)

    def message(self, side):
        """Why the last change of design ``side`` was refused ("" when applied)."""
        return self.sides[self._side(side)].message

    def rows(self):
        """The table as ``(quantity, text A, text B, B against A)`` tuples (what the view shows)."""
        a, b = (self.evaluation(s) for s in SIDES)
        ha, hb = (self.sides[s].headline_text() for s in SIDES)
        out = [("output current I_out", ha["I_out"], hb["I_out"], _relative(a.i_out, b.i_out)),
               ("output resistance R_out", resistance(a.r_out), resistance(b.r_out), _ratio(a.r_out, b.r_out)),
               ("compliance (load voltage)", ha["compliance"], hb["compliance"], "")]
        room = [headroom(e) for e in (a, b)]
        out.append(("headroom at V_load (to the nearer edge)",
                    *(f"{format_quantity(v, 'V', 3)} to the {edge}" for v, edge in room),
                    _difference(room[0][0], room[1][0], "V")))
        out.append(("tempco of I_out", ha["tempco"], hb["tempco"], _difference(a.tempco, b.tempco, "ppm/K")))
        sens = [beta_sensitivity(e) for e in (a, b)]
        words = [f"{s:+.3g} (ΔI/I = {s * 0.1:+.3%} per +10 % β_F)" if s is not None
                 else "no bipolar transistor" for s in sens]
        out.append(("β_F sensitivity (β/I) dI/dβ, all β_F together", *words,
                    _ratio(abs(sens[0]), abs(sens[1])) if None not in sens else ""))
        out.append(("dissipation", ha["dissipation"], hb["dissipation"], ""))
        if self.spec is not None:
            out += self._worst_rows()
        return out

    def run_worst_case(self):
        """The worst case of both designs against the spec (each design's own, tolerances typed included)."""
        if self.spec is None:
            raise ParameterError("no spec to check against", parameter="spec", value=None,
                                 valid="a kit.analysis.spec.Spec given to ComparePanel")
        self.status.value = _status("Running …")
        for side in SIDES:
            panel = self.sides[side]
            try:
                self.results[side] = worst_case(panel.design, panel.spec, network=panel.network_for(panel.design))
            except DesignError as err:
                self.results[side] = None
                self.status.value = _status(f"Not run for {side}: {err}", error=True)
                self._show_table()
                return self.results
        self.status.value = _status("Result for both designs as they are now.")
        self._show_table()
        return dict(self.results)

    def csv(self, name):
        """The overlaid plot ``name`` (``"load"``, ``"temp"``) as CSV text (what its button saves)."""
        if name not in CSV_COLUMNS:
            raise ParameterError("no such plot", parameter="name", value=name, valid=", ".join(CSV_COLUMNS))
        return csv_text(name, self.sources, CSV_COLUMNS[name])

    def svg(self, name):
        """The overlaid plot ``name`` as SVG text (offline, the system Chromium; see kit.panels.export)."""
        from kit.panels.export import svg_text

        if name not in self.figures:
            raise ParameterError("no such plot", parameter="name", value=name, valid=", ".join(self.figures))
        return svg_text(self.figures[name])

    def _ipython_display_(self):
        from IPython.display import display as show

        from kit.panels.notebook import load_bokeh

        load_bokeh()
        for name, model in self.bokeh.items():  # a view opened later starts from the stored drawing
            model.update_from_model(self.figures[name])
        show(self.widget)

    def _repr_mimebundle_(self, **kwargs):
        return self.widget._repr_mimebundle_(**kwargs)

    # -- what is shown ------------------------------------------------------------------
    @staticmethod
    def _side(side):
        if side not in SIDES:
            raise ParameterError("no such design", parameter="side", value=side, valid="A or B")
        return side

    def _changed(self, side):
        if self.results[side] is not None and self.results[side].design != self.sides[side].design:
            self.status.value = _status(f"Design {side} has changed since the worst case: check again.",
                                        error=True)
        self._show()

    def _worst_rows(self):
        rows = []
        fresh = [r if r is not None and r.design == self.sides[s].design else None
                 for s, r in self.results.items()]
        if fresh == [None, None]:
            return [("worst case against the spec", "not run", "not run", "")]

        def texts(fn):
            return [fn(r) if r is not None else "not run" for r in fresh]

        bound = [r.methods[r.decided_by] if r is not None else None for r in fresh]
        rows.append(("worst case (" + " / ".join(dict.fromkeys(m.method for m in bound if m)) + ")",
                     *(f"{format_quantity(m.low, 'A', 4)} … {format_quantity(m.high, 'A', 4)}" if m else "not run"
                       for m in bound), ""))
        rows.append(("margin to the spec", *(f"{m.margin:+.2%}" if m else "not run" for m in bound),
                     f"{100 * (bound[1].margin - bound[0].margin):+.2f} percentage points"
                     if None not in bound else ""))
        rows.append(("verdict", *texts(lambda r: "spec met" if r.met else "spec not met"), ""))
        rows.append(("stress inside the spec", *texts(lambda r: stress_headline(r).removeprefix(
            "stress inside the spec: ") or "nothing dissipates"), ""))
        return rows

    def _show(self):
        self._fill_figures()
        self._show_table()
        for side in SIDES:
            panel = self.sides[side]
            self.names[side].value = _name_html(side, panel.design)

    def _show_table(self):
        head = "".join(f'<th style="{_CELL};background:#eef2f5;text-align:left">{display.escape(h)}</th>'
                       for h in ("", "A", "B", "B against A"))
        body = []
        for quantity, a, b, against in self.rows():
            a, b, against = (display.escape(keep_units(t)) for t in (a, b, against))
            body.append(f'<tr><td style="{_CELL};color:#444">{display.escape(quantity)}</td>'
                        f'<td style="{_CELL};font-variant-numeric:tabular-nums">{a}</td>'
                        f'<td style="{_CELL};font-variant-numeric:tabular-nums">{b}</td>'
                        f'<td style="{_CELL};color:#444;white-space:nowrap">{against}</td></tr>')
        self.table.value = (f'<div style="font-family:{theme.FONT};font-size:13px;line-height:1.3;overflow-x:auto">'
                            f'<table style="border-collapse:collapse;width:100%"><tr>{head}</tr>{"".join(body)}'
                            "</table></div>")

    # -- the overlaid curves ------------------------------------------------------------
    def _build_figures(self):
        from bokeh.models import ColumnDataSource, DataRange1d, HoverTool, Legend, LegendItem
        from bokeh.plotting import figure

        self.sources = {}
        for side in SIDES:
            for name, (x, _, _) in PLOTS.items():
                self.sources[f"{side}_{name}"] = ColumnDataSource(data={x: [], "i_out": [], "y": []})
                self.sources[f"{side}_{name}_point"] = ColumnDataSource(data={"x": [], "y": []})
            self.sources[f"{side}_edges"] = ColumnDataSource(data={"x": [], "y0": [], "y1": []})
        self.figures, self.hovers = {}, {}
        for name, (x, x_label, _) in PLOTS.items():
            # The load plot's height follows the edge marks, drawn over the currents inside
            # compliance: a saturated part beyond an edge does not squash the curves.
            more = {"y_range": DataRange1d(range_padding=0)} if name == "load" else {}
            fig = figure(width=theme.PLOT_WIDTH, height=theme.PLOT_HEIGHT + 40,
                         tools="pan,box_zoom,reset,save", x_axis_label=x_label, **more)
            theme.style_figure(fig)
            lines, edges, items = [], [], []
            for side in SIDES:
                colour, dash = STYLE[side]
                line = fig.line(x, "y", source=self.sources[f"{side}_{name}"], line_color=colour,
                                line_dash=dash, line_width=2.5)
                line.name = side  # the hover says which design ("$name")
                lines.append(line)
                if name == "load":
                    # No legend entry of their own: the title says dotted lines are the edges,
                    # and each is drawn in its design's colour.
                    edges.append(fig.segment(x0="x", x1="x", y0="y0", y1="y1",
                                             source=self.sources[f"{side}_edges"], line_color=colour,
                                             line_dash="dotted", line_width=1.5))
                point = fig.scatter("x", "y", source=self.sources[f"{side}_{name}_point"], size=8,
                                    fill_color="white", line_color=colour, line_width=2)
                # One entry per design, naming its circuit: curve and design point together.
                items.append(LegendItem(label=side, renderers=[line, point]))
            if edges:
                fig.y_range.renderers = edges
            hover = HoverTool(renderers=lines, mode="vline", tooltips=[("design", "$name")])
            fig.add_tools(hover)
            self.hovers[name] = hover
            legend = Legend(items=items, location="top_left")
            fig.add_layout(legend, "below")  # below the plot, never over the curves; one line per design
            theme.style_legend(fig, "top_left")
            add_csv_action(fig, f"biasbook-compare-{name}.csv", self.sources, CSV_COLUMNS[name])
            add_svg_action(fig, f"biasbook-compare-{name}.svg")
            name_save_tool(fig)
            self.figures[name] = fig

    def _fill_figures(self):
        data = {s: self.sides[s].plot_data.columns for s in SIDES}
        evals = {s: self.evaluation(s) for s in SIDES}
        factor, unit = theme.current_scale(max(abs(e.i_out) for e in evals.values()))
        inside = []
        for side in SIDES:
            e = evals[side]
            for name, (x, _, _) in PLOTS.items():
                curve = data[side][name]
                i_out = np.asarray(curve["i_out"], float)
                self.sources[f"{side}_{name}"].data = {x: np.asarray(curve[x], float), "i_out": i_out,
                                                       "y": i_out / factor}
                point = data[side][f"{name}_point"]["x"]  # empty where the design has no gain to sweep
                self.sources[f"{side}_{name}_point"].data = {"x": list(point),
                                                             "y": [e.i_out / factor] * len(point)}
            v_load, i_load = np.asarray(data[side]["load"]["v_load"], float), np.asarray(data[side]["load"]["i_out"])
            c = e.compliance
            within = (v_load >= c.low.voltage) & (v_load <= c.high.voltage) & np.isfinite(i_load)
            inside += list(i_load[within] / factor) + [e.i_out / factor]
        low, high = min(inside), max(inside)
        pad = 0.08 * (high - low) if high > low else 0.05 * abs(high) or 1.0
        for side in SIDES:
            c = evals[side].compliance
            self.sources[f"{side}_edges"].data = {"x": [c.low.voltage, c.high.voltage], "y0": [low - pad] * 2,
                                                  "y1": [high + pad] * 2}
        from bokeh.core.properties import value

        names = {side: legend_name(side, self.design(side)) for side in SIDES}
        for name, fig in self.figures.items():
            fig.title.text = PLOTS[name][2]
            for item, side in zip(fig.legend[0].items, SIDES):
                if getattr(item.label, "value", None) != names[side]:
                    item.label = value(names[side])  # a bare string would name a data column
            fig.yaxis.axis_label = f"I_out ({unit})"
            self.hovers[name].tooltips = [("design", "$name"), X_TIPS[name], ("I_out", f"@y{{0.000}} {unit}")]
        self._show_tabs()

    def _show_tabs(self):
        """The gain plot only where a design has bipolar transistors (no empty plot box)."""
        if not hasattr(self, "tabs"):
            return
        wanted = [n for n in PLOTS if n != "beta" or any(len(self.sources[f"{s}_beta"].data["beta"]) for s in SIDES)]
        if [self.tabs.titles[k] for k in range(len(self.tabs.children))] != [TAB_TITLES[n] for n in wanted]:
            chosen = self.tabs.selected_index
            self.tabs.children = [self.bokeh[n] for n in wanted]
            self.tabs.titles = [TAB_TITLES[n] for n in wanted]
            self.tabs.selected_index = chosen if chosen is not None and chosen < len(wanted) else 0

    # -- widgets --------------------------------------------------------------------------
    def _build_widgets(self):
        from jupyter_bokeh.widgets import BokehModel

        self.table = widgets.HTML(layout=widgets.Layout(width="100%"))
        self.status = widgets.HTML(_status("Not run yet: takes a few seconds per design.") if self.spec else "")
        self.button = widgets.Button(description="check both against the spec", button_style="primary",
                                     layout=widgets.Layout(width="240px",
                                                           display="flex" if self.spec is not None else "none"))
        self.button.on_click(lambda _: self.run_worst_case())
        self.bokeh = {name: BokehModel(fig) for name, fig in self.figures.items()}
        self.tabs = widgets.Tab(layout=widgets.Layout(width="100%"))
        self._show_tabs()
        self.names = {side: widgets.HTML(layout=widgets.Layout(width="100%")) for side in SIDES}
        columns = []
        for side in SIDES:
            panel = self.sides[side]
            head = widgets.Box([panel.topology_choice.widget, panel.polarity_choice.widget],
                               layout=widgets.Layout(display="flex", flex_flow="row wrap", width="100%"))
            columns.append(widgets.VBox(
                [self.names[side], head, panel.message_line, panel.values_box, panel.conditions_box],
                layout=widgets.Layout(flex="1 1 400px", min_width="0", padding="0 6px 6px 0",
                                      border_left=f"3px solid {STYLE[side][0]}")))
        edit = widgets.Box(columns, layout=widgets.Layout(display="flex", flex_flow="row wrap", width="100%",
                                                          grid_gap="8px 10px"))
        # Each value band of a design panel lays its fields out for a full-width column: here they stack.
        for side in SIDES:
            for box in (self.sides[side].values_box, self.sides[side].conditions_box):
                box.layout.flex_flow = "column"
            # The circuit list as wide as its column: a circuit's name is not cut after 30 letters.
            choice = self.sides[side].topology_choice.widget
            choice.layout.width, choice.layout.max_width = "100%", "420px"
        self.widget = widgets.VBox([
            _heading("Two designs side by side"), self.table,
            widgets.HBox([self.button, self.status]),
            _heading("Both curves"), self.tabs,
            _heading("Values of each design"), edit,
        ], layout=widgets.Layout(width="100%", max_width="1000px"))
        self.widget.add_class("biasbook-panel")
        self.widget.add_class("biasbook-compare")


def _status(text, error=False):
    colour = theme.FAIL_COLOUR if error else "#444"
    return f'<span style="color:{colour};font-family:{theme.FONT};font-size:13px">{display.escape(text)}</span>'


def legend_name(side, design):
    """A design's legend entry: its letter and circuit (``"A: Wilson current mirror (three transistors), NPN"``)."""
    return f"{side}: {design.topology.title}, {design.polarity.upper()}"


def _name_html(side, design):
    what = f"{design.topology.title} ({design.polarity.upper()})"
    if design.title:
        what = f"{design.title} — {what}"
    return (f'<div style="font-family:{theme.FONT};font-weight:600;color:{STYLE[side][0]};font-size:14px;'
            'line-height:1.3;white-space:normal">'
            f"{side}: {display.escape(what)}</div>")


def _heading(text):
    return widgets.HTML(f'<div style="font-family:{theme.FONT};font-weight:600;color:{theme.INK};'
                        f'border-bottom:1px solid #c9d3dc;margin:8px 0 2px">{display.escape(text)}</div>',
                        layout=widgets.Layout(width="100%"))
