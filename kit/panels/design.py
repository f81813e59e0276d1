"""The design panel: every value of a design, live numbers, schematic and plots.

:class:`DesignPanel` is built from the topology's value specs, so it serves
any registered topology.  A change — typed, stepped, slid, or passed to
:meth:`DesignPanel.update` by a script — goes one way: read and validate,
build the new design, evaluate it with the kit, compute the open plot's
columns, and only when all of that succeeded show it.  A plot in a closed
tab is made from the same design when it is opened (or read through
:attr:`DesignPanel.sources` or :attr:`DesignPanel.plot_data`).  A refused change leaves the
design, the numbers and the plots as they were and says why in the message
line.
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field, replace

import ipywidgets as widgets

import kit
from kit.report import tables as display
from kit.report import html as report_html
from kit.report.evaluation import headline as headline_of
from kit.analysis import eseries
from kit.errors import DesignError, ParameterError
from kit.panels import curves, inputs, plots, sync, theme, views
from kit.panels.ledger import ledger_html
from kit.quantities import celsius_to_kelvin, format_quantity, kelvin_to_celsius, parse_quantity

TEMP_SLIDER = (-55.0, 150.0)  # °C
BETA_SLIDER = (10.0, 2000.0)
SUPPLY_SLIDER = (0.25, 2.5)  # multiples of the supply the panel opened with


@dataclass
class _State:
    """Everything one design point shows; computed before anything is displayed.

    ``data`` holds the plots in ``views`` (the open one after a change); the
    others are made from this state when they are opened or read.
    """

    design: object
    evaluation: object
    data: object
    headline: dict
    views: set = field(default_factory=lambda: set(curves.VIEWS))


class DesignPanel:
    """An interactive panel for one design (a bare ``panel`` in a cell shows it).

    Parameters
    ----------
    design : kit.model.design.Design
        The starting point; it must evaluate (a script error raises here).
    spec : kit.analysis.spec.Spec, optional
        Gives the gain and temperature ranges of the plots, the E-series (from
        its resistor tolerance) and adds the worst-case and standard-value views.
    series : str, optional
        E-series of the steppers (default from the spec, else E24).
    settings : kit.panels.curves.Settings, optional
    search : dict, optional
        ``topologies=`` and ``polarities=`` for the standard-value search
        (default: this design's topology and polarity).
    network : kit.analysis.thermal.ThermalNetwork, optional
        How the parts share heat (a record's ``[thermal]``), for designs of
        this circuit and polarity (default: each part in its own package).

    Attributes
    ----------
    design, evaluation : the present (last good) design and its evaluation
    sources : dict of name -> bokeh ColumnDataSource
    figures : dict of name -> bokeh figure (the live ones)
    message : str
        Why the last change was refused ("" when it was applied).
    timings : dict
        Seconds taken by the phases of the last applied change.
    widget : ipywidgets.VBox
        The whole panel.

    Examples
    --------
    >>> import kit
    >>> from kit.panels import DesignPanel
    >>> panel = DesignPanel(kit.design("divider_source"))
    >>> panel.update(r_e="2k0")
    True
    >>> panel.headline_text()["I_out"] == headline_of(kit.evaluate(panel.design))["I_out"]
    True
    >>> panel.update(r_e="abc"), panel.design.values["r_e"]
    (False, 2000.0)
    """

    def __init__(self, design, spec=None, *, series=None, settings=None, search=None, network=None):
        self.spec = spec
        self.network = network
        self._network_circuit = (design.topology.key, design.polarity)  # what the network was written for
        if series is None:
            series = eseries.series_for_tolerance(spec.resistor_tolerance) \
                if spec is not None and spec.resistor_tolerance else "E24"
        eseries.decade_values(series)  # refuses an unknown series by name
        self.series = series.upper()
        self.settings = settings or curves.Settings()
        self.message = ""
        self.tolerances = {}  # resistor -> tolerance typed with its value ("4k7 5%")
        self.timings = {}
        self.last_error = None
        self._listeners = []
        self._layout_key = None
        self._state = state = self._compute(design, self.settings)
        # Filled before the BokehModels wrap them: a model's first drawing is what it was built with.
        self.figures, self._sources = plots.build(state.data)
        self._build_widgets()
        self._drawn = state  # what the BokehModels were built with
        self.worst = self.search = None
        if spec is not None:
            from kit.panels.worst import SynthesisView, WorstCaseView

            self.worst = WorstCaseView(self, spec)
            self.search = SynthesisView(self, spec, **(search or {}))
        self._build_tabs()
        self._commit(state)

    # -- public API -------------------------------------------------------------
    @property
    def design(self):
        return self._state.design

    @property
    def evaluation(self):
        return self._state.evaluation

    @property
    def plot_data(self):
        """The :class:`kit.panels.curves.PlotData` of the present design, every plot (columns, axis texts, current scale)."""
        self._complete_views()
        return self._state.data

    @property
    def sources(self):
        """Source name -> Bokeh ColumnDataSource, each holding the present design."""
        self._complete_views()
        return self._sources

    def headline_text(self):
        """Label -> text of the headline numbers, as :meth:`kit.report.evaluation.headline` gives them."""
        return dict(self._state.headline)

    def update(self, **changes):
        """Change values the way the widgets do; returns True if the change was applied.

        Keys are the topology's value names (``r_e="2k0"``, ``v_load=6``), ``temp``
        (K, or text such as ``"85 degC"``), ``beta`` (β_F of every bipolar
        transistor) and flat parameter names (``**{"Q1.beta_f": 150}``).  Text is
        read by :func:`kit.quantities.parse_quantity`; numbers are SI.
        """
        return self._apply(lambda: self._changed(changes), changes)

    def load(self, design):
        """Show another design (any topology); returns True if it evaluates."""
        return self._apply(lambda: design, {"design": f"{design.topology.key} ({design.polarity})"})

    def switch(self, topology=None, polarity=None):
        """Show another topology or polarity, carrying over every value both circuits share.

        The shared values are the topology values of the same name, the
        temperature and the title; the rest start from the new topology's
        defaults.  If a carried value does not suit the new circuit (a load
        voltage beyond its compliance), that value starts from its default
        too.  Returns True if the new design evaluates.
        """
        from kit.topologies import get

        old = self.design
        top = get(topology) if topology is not None else old.topology
        if polarity is None or polarity not in top.polarities:
            polarity = old.polarity if old.polarity in top.polarities else top.polarities[0]
        names = {v.name for v in top.values}
        shared = {k: v for k, v in old.values.items() if k in names}

        def make():
            carried = dict(shared)
            while True:
                design = kit.design(top.key, polarity, title=old.title, temp=old.temp, **carried)
                try:
                    kit.evaluate(design, network=self.network_for(design))
                    return design
                except DesignError as err:
                    if err.parameter not in carried:
                        raise
                    carried.pop(err.parameter)  # this one does not suit the new circuit

        return self._apply(make, {"topology": f"{top.key} ({polarity})"})

    def network_for(self, design):
        """The panel's thermal network for ``design``, or None (each part in its own package).

        A network names parts of the circuit it was written for; another circuit's
        Q1 and Q2 are other transistors, so after a switch the parts stand alone.
        """
        if self.network is None or (design.topology.key, design.polarity) != self._network_circuit:
            return None
        return self.network

    def csv(self, name):
        """The numbers of plot ``name`` as CSV text (what its download button saves).

        ``name`` is one of :data:`kit.panels.plots.FIGURES`, or ``"histogram"`` /
        ``"budget"`` for the worst-case plots (after a worst-case run).
        """
        if name in plots.FIGURES:
            return plots.csv_text(name, self.sources)
        return self._worst_figure(name).csv(name)

    def svg(self, name):
        """Plot ``name`` (as for :meth:`csv`) drawn as SVG text, offline by the system Chromium.

        What its SVG button saves in the browser (:mod:`kit.panels.export`).
        """
        from kit.panels.export import svg_text

        if name in plots.FIGURES:
            return svg_text(plots.build(self.plot_data)[0][name])  # a fresh copy of the present drawing
        return svg_text(self._worst_figure(name).figures[name])

    def _worst_figure(self, name):
        from kit.panels.worst import CSV_COLUMNS

        if name not in CSV_COLUMNS or self.worst is None or self.worst.result is None:
            known = [*plots.FIGURES] + ([*CSV_COLUMNS] if self.worst is not None else [])
            raise ParameterError("no such plot shown" + (" (run the worst case first)" if name in CSV_COLUMNS
                                                          else ""), parameter="name", value=name,
                                 valid=", ".join(known))
        return self.worst

    def compare(self, other):
        """The present design and ``other`` side by side (a :class:`kit.panels.compare.ComparePanel`).

        Both are edited there on their own; this panel is left as it is.
        """
        from kit.panels.compare import ComparePanel

        return ComparePanel(self.design, other, self.spec)

    def step(self, name, direction):
        """Move resistor ``name`` to the next standard value up (+1) or down (-1)."""
        value = self.design.values[name]
        near = eseries.neighbours(value, self.series, count=1)
        if direction > 0:
            target = min(v for v in near if v > value * (1 + 1e-9))
        else:
            target = max(v for v in near if v < value * (1 - 1e-9))
        return self.update(**{name: float(target)})

    def configure(self, *, series=None, common_beta=None, self_heating=None):
        """Change how the panel draws (E-series of the steppers, gain sliders, self-heating curve)."""
        if series is not None:
            try:
                eseries.decade_values(series)
            except DesignError as err:
                self._refuse(err, {"series": series})
                return False
            self.series = series.upper()  # only the steppers use it: nothing to recompute
            self._show_values()
        changes = {k: v for k, v in (("common_beta", common_beta), ("self_heating", self_heating))
                   if v is not None and v != getattr(self.settings, k)}
        if not changes:
            return True
        return self._apply(lambda: self.design, {}, settings=replace(self.settings, **changes), force=True)

    def on_change(self, callback):
        """Call ``callback(panel)`` after every applied change."""
        self._listeners.append(callback)

    def final_figures(self):
        """Fresh static Bokeh figures of the present state (self-heated curve included), for reports.

        An exported page keeps a live widget's first drawing, so a report draws these.
        """
        settings = replace(self.settings, self_heating=True)
        data = curves.plot_data(self.design, self.evaluation, self.spec, settings)
        figures, _ = plots.build(data)
        return figures

    @property
    def ledger_html(self):
        """The derivation and ledger view as HTML with LaTeX (of the present design)."""
        self._draw_views()
        return self.ledger.value

    @property
    def schematic_html(self):
        """The circuit drawing with the present values, as HTML (SVG inside)."""
        self._draw_views()
        return self.schematic.value

    def _ipython_display_(self):
        import os

        from IPython.display import display as show

        from kit.panels.notebook import load_bokeh

        load_bokeh()
        self._draw_views()
        if os.environ.get("BIASBOOK_REVIEW") == "1":
            # Building a review: a printed page keeps no live widget, so show the
            # panel's present state as static tables and figures instead.
            from bokeh.io import show as show_figure
            from IPython.display import HTML

            show(HTML(report_html(self.evaluation)))
            for figure in self.final_figures().values():
                show_figure(figure)
            return
        self.refresh_drawings()
        show(self.widget)

    def refresh_drawings(self, force=False):
        """Re-send the Bokeh drawings whole if they changed since they were last sent.

        A view opened later starts from a BokehModel's stored drawing; changes made
        before any view existed reach no view.
        """
        if force or self._drawn is not self._state:
            self._complete_views()  # a whole figure goes out: each must hold the present design
            for name, model in self.bokeh.items():
                model.update_from_model(self.figures[name])
            self._drawn = self._state
        if self.worst is not None:
            self.worst.refresh_drawings(force)

    def _repr_mimebundle_(self, **kwargs):
        self._draw_views()
        return self.widget._repr_mimebundle_(**kwargs)

    # -- one way through: read, validate, compute, then show ----------------------
    def _apply(self, make_design, changes, *, settings=None, force=False):
        settings = settings or self.settings
        self._pending_tolerances = {}
        try:
            design = make_design()
            self._take_tolerances(self._pending_tolerances)
            if design == self.design and not force:
                self._clear_message()
                self._show_values()
                return True
            state = self._compute(design, settings, reuse=self._state.evaluation if hasattr(self, "_state") else None,
                                  views=self._open_plots())
        except DesignError as err:
            self._refuse(err, changes)
            return False
        except Exception as err:  # noqa: BLE001 -- the designer gets a message, never a traceback
            self.last_error = err
            self._refuse(err, changes)
            return False
        self.settings = settings
        self._commit(state)
        return True

    def _changed(self, changes):
        """The design with ``changes`` applied (validated by the kit); nothing is changed here."""
        design = self.design
        units = {v.name: v.unit for v in design.topology.values}
        values, flat, tolerances = {}, {}, {}
        for name, raw in changes.items():
            if name in units:
                raw, tolerance = inputs.split_tolerance(raw, name)
                if tolerance is not None:
                    if design.topology.value(name).kind != "resistor":
                        raise ParameterError("a tolerance belongs to a resistor", parameter=name, value=raw,
                                             valid="a value without %")
                    tolerances[name] = tolerance
                values[name] = parse_quantity(raw, units[name], name=name)
            elif name == "temp":
                flat["temp"] = parse_quantity(raw, "K", name="temp")
            elif name == "beta":
                gains = curves.gain_transistors(design)
                if not gains:
                    raise ParameterError("this topology has no bipolar transistor", parameter="beta",
                                         value=raw, valid="no β_F to set here")
                beta = parse_quantity(raw, "", name="beta")
                flat.update({f"{t}.beta_f": beta for t in gains})
            elif name in design.parameters():
                flat[name] = parse_quantity(raw, None, name=name)
            else:
                raise ParameterError(f"not a value of {design.topology.key}", parameter=name, value=raw,
                                     valid=", ".join([*units, "temp", "beta", "or a parameter such as "
                                                      f"{design.structure.device_names[0]}.{design.structure.devices[0].kind.params[0].name}"]))
        if values:
            design = design.with_values(**values)
        for name, value in flat.items():
            design = design.with_parameter(name, value)
        self._pending_tolerances = tolerances
        return design

    def _take_tolerances(self, tolerances):
        """Keep typed tolerances; with a spec, the worst case uses them from now on."""
        if not tolerances:
            return
        self.tolerances.update(tolerances)
        if self.spec is not None:
            self.spec = replace(self.spec, tolerances={**dict(self.spec.tolerances), **tolerances})
            if self.worst is not None:
                self.worst.spec = self.spec

    def _compute(self, design, settings, reuse=None, views=curves.VIEWS):
        start = time.perf_counter()
        # A load-voltage step keeps the compliance edges: the kit reuses them when nothing else changed.
        evaluation = kit.evaluate(design, reuse=reuse, network=self.network_for(design))
        headline = headline_of(evaluation)
        evaluated = time.perf_counter()
        data = curves.plot_data(design, evaluation, self.spec, settings, views=views)
        self._pending_timings = {"evaluate": evaluated - start, "sweeps": time.perf_counter() - evaluated}
        return _State(design, evaluation, data, headline, set(views))

    def _open_plots(self):
        """The plot views to make with a change: the open tab's, if it holds a plot."""
        shown = self._open_view()
        return tuple(name for name, model in self.bokeh.items() if model is shown)

    def _complete_views(self, views=curves.VIEWS):
        """Make the plots in ``views`` that the present state does not hold yet, and fill their sources.

        A closed view's changes are held until its tab opens (:mod:`kit.panels.sync`).
        """
        state = self._state
        missing = [view for view in views if view not in state.views]
        if not missing:
            return
        data = curves.plot_data(state.design, state.evaluation, self.spec, self.settings, views=missing)
        state.data.columns.update(data.columns)
        state.data.labels.update(data.labels)
        state.data.factors.update(data.factors)
        state.views.update(missing)  # the same design point, more of it made
        if not hasattr(self, "bokeh"):  # still being built
            return
        with sync.batched([self.bokeh[view] for view in missing if view in self.bokeh]):
            plots.fill(self.figures, {name: self._sources[name] for name in data.columns}, data)

    def _commit(self, state):
        start = time.perf_counter()
        self._state = state
        key = (state.design.topology, state.design.polarity, self.settings.common_beta)
        if key != self._layout_key:
            self._build_inputs()
            if self._layout_key is None or key[:2] != self._layout_key[:2]:
                self._build_tabs()
            self._layout_key = key
        # One message per widget and one patch per figure, sent when the block ends.
        with sync.batched(self.bokeh.values(), self._synced_widgets()):
            plots.fill(self.figures, {name: self._sources[name] for name in state.data.columns}, state.data)
            self.title.value = views.title_html(state.design)
            self.headline.value = views.headline_html(state.evaluation, state.headline, self.spec)
            self._show_values()
            self._clear_message()
        sent = time.perf_counter()
        # The drawing and the ledger are drawn after the numbers and plots have gone out
        # (the browser shows those meanwhile), and only when their tab is open: a closed
        # one draws the newest design when it opens (reading them through the API does too).
        self._views_for = state
        if self._open_view() in (self.ledger, self.schematic):
            self._draw_views()
        self.timings = dict(self._pending_timings, views=time.perf_counter() - sent, widgets=sent - start)
        self.timings["total"] = sum(self.timings.values())
        for callback in self._listeners:
            callback(self)

    def _draw_views(self):
        """Draw the schematic and the ledger of the present design if they are behind."""
        state, self._views_for = getattr(self, "_views_for", None), None
        if state is not None:
            self.schematic.value = views.schematic_html(state.design)
            self.ledger.value = ledger_html(state.evaluation)

    def _open_view(self):
        index = self.tabs.selected_index
        return self.tabs.children[index] if index is not None and index < len(self.tabs.children) else None

    def _synced_widgets(self):
        return [self.title, self.headline, self.schematic, self.ledger, self.message_line,
                *(f.text for f in self.fields.values()), *(e.widget for e in self.sliders.values())]

    # -- messages -------------------------------------------------------------------
    def _refuse(self, err, changes):
        what = str(err) if isinstance(err, DesignError) else f"{type(err).__name__}: {err}"
        # The kit's error names the value it refused; the attempt is said only when it does not.
        said = isinstance(err, DesignError) and err.parameter in changes
        attempt = "" if said else ", ".join(f"{k} = {self._said(k, v)}" for k, v in changes.items())
        self.message = (f"Not applied{': ' + attempt if attempt else ''}. {what}. "
                        "The panel still shows the last good design.")
        self.message_line.value = (
            f'<div style="background:#f7e3e1;border-left:4px solid {theme.FAIL_COLOUR};padding:4px 8px;'
            f'color:#5a1a1a;font-size:13px;line-height:1.35;white-space:normal">{display.escape(self.message)}</div>')
        self._show_values()  # undo what the widget shows

    def _said(self, name, value):
        """A refused value as the designer would write it: text as typed, a number with its unit."""
        if isinstance(value, str) or isinstance(value, bool) or not isinstance(value, (int, float)):
            return repr(value) if isinstance(value, str) else str(value)
        unit = {v.name: v.unit for v in self.design.topology.values}.get(name, "K" if name == "temp" else "")
        return format_quantity(value, unit, 4) if unit else f"{value:.4g}"

    def _clear_message(self):
        self.message = ""
        self.message_line.value = ""

    # -- widgets ----------------------------------------------------------------------
    # The panel reads top to bottom as the kit works: the circuit chosen, the values
    # put in, the numbers that come out, then every view of how they came out (the
    # curves, the sensitivities, the equations with their ledger, the drawing).  Each
    # band wraps, so a narrow notebook column reflows instead of cutting.
    def _build_widgets(self):
        from kit.topologies import all_topologies

        self.title = widgets.HTML(layout=widgets.Layout(flex="1 1 320px"))
        self.headline = widgets.HTML(layout=widgets.Layout(width="100%"))
        self.message_line = widgets.HTML(layout=widgets.Layout(width="100%"))
        self.schematic = widgets.HTML(layout=widgets.Layout(max_width="560px"))
        self.ledger = widgets.HTMLMath(layout=widgets.Layout(width="100%", overflow="auto"))
        self.values_box = _wrap()
        self.conditions_box = _wrap()
        self.topology_choice = inputs.Echo(widgets.Dropdown(
            options=[(t.title, t.key) for t in all_topologies()], value=self.design.topology.key,
            description="circuit", style={"description_width": "52px"}, layout=widgets.Layout(width="auto", max_width="100%")),
            lambda key: self.switch(topology=key))
        self.polarity_choice = inputs.Echo(widgets.ToggleButtons(
            options=list(self.design.topology.polarities), value=self.design.polarity,
            style={"button_width": "64px"}, layout=widgets.Layout(width="auto")),
            lambda polarity: self.switch(polarity=polarity))
        self.series_choice = inputs.Echo(widgets.Dropdown(
            options=list(eseries.SERIES), value=self.series, description="stepper series",
            style={"description_width": "100px"}, layout=widgets.Layout(width="200px")),
            lambda value: self.configure(series=value))
        self.common_choice = inputs.Echo(widgets.Checkbox(
            value=self.settings.common_beta, description="one β_F slider for all bipolar transistors",
            indent=False, layout=widgets.Layout(width="auto")),
            lambda value: self.configure(common_beta=value))
        self.heating_choice = inputs.Echo(widgets.Checkbox(
            value=self.settings.self_heating, description="self-heated temperature curve (slower)",
            indent=False, layout=widgets.Layout(width="auto")), lambda value: self.configure(self_heating=value))
        # One BokehModel per figure: each patch is serialised against its own small
        # document, several times faster than against one document of all five.
        self.bokeh = {name: sync.BatchedBokehModel(fig) for name, fig in self.figures.items()}
        self.settings_box = _wrap()
        head = widgets.Box([self.title, self.topology_choice.widget, self.polarity_choice.widget],
                           layout=_band_layout(align_items="center"))
        self.top = widgets.VBox([
            head,
            _heading("Values"), self.values_box, self.conditions_box,
            _heading("Numbers"), self.message_line, self.headline,
        ], layout=widgets.Layout(width="100%"))
        self.plots = widgets.VBox([self.bokeh[name] for name in plots.FIGURES])
        self.tabs = widgets.Tab(layout=widgets.Layout(width="100%"))
        self.tabs.observe(self._show_tab, "selected_index")
        self.widget = widgets.VBox([widgets.HTML(_STYLE), self.top, _heading("How the numbers come about"),
                                    self.tabs, self.settings_box],
                                   layout=widgets.Layout(width="100%", max_width="1000px"))
        self.widget.add_class("biasbook-panel")

    def _build_tabs(self):
        gains = curves.gain_transistors(self.design)
        views_ = [("load", "load"), ("beta", "β_F"), ("temp", "temperature"),
                  ("sensitivity", "sensitivities"), ("tempco", "tempco")]
        children, titles = [], []
        for name, title in views_:
            if name == "beta" and not gains:
                continue  # no bipolar transistor: no gain to sweep, no empty box
            children.append(self.bokeh[name])
            titles.append(title)
        children += [self.ledger, self.schematic]
        titles += ["ledger", "circuit"]
        if self.worst is not None:
            children += [self.worst.widget, self.search.widget]
            titles += ["worst case", "standard values"]
        before = self.tabs.titles[self.tabs.selected_index] if self.tabs.selected_index is not None \
            and self.tabs.selected_index < len(self.tabs.titles) else None
        self.tabs.children = children
        self.tabs.titles = titles
        # The same view stays open across a switch; the gain view, gone with the bipolar parts, gives way to the first.
        self.tabs.selected_index = titles.index(before) if before in titles else 0
        self._show_tab()

    def _show_tab(self, change=None):
        """Only the open tab's view sends its changes; the others are made and send theirs when opened."""
        shown = self._open_view()
        if shown in (self.ledger, self.schematic):
            self._draw_views()
        self._complete_views(self._open_plots())
        for model in self.bokeh.values():
            model.hidden = model is not shown
        for view in (self.ledger, self.schematic):
            sync.hold_while_hidden(view, view is not shown)

    def _build_inputs(self):
        design = self.design
        self.topology_choice.show(design.topology.key)
        self.polarity_choice.show(design.polarity, options=list(design.topology.polarities))
        self.fields = {}
        for spec in design.topology.values:
            stepper = self.step if spec.kind == "resistor" else None
            self.fields[spec.name] = inputs.ValueField(
                spec, lambda name, text: self.update(**{name: text}), stepper)
        self.values_box.children = [f.widget for f in self.fields.values()]
        self.sliders = {}
        gains = curves.gain_transistors(design)
        if gains and self.settings.common_beta:
            shown, _ = curves.swept_gains(design, self.settings)
            label = "β_F (all)" if len(gains) > 1 else f"β_F of {gains[0]}"
            self.sliders["beta"] = inputs.slider(label, design.devices[shown].beta_f, *BETA_SLIDER,
                                                 lambda v: self.update(beta=v), log=True)
        else:
            for name in gains:
                self.sliders[f"{name}.beta_f"] = inputs.slider(
                    f"β_F of {name}", design.devices[name].beta_f, *BETA_SLIDER,
                    lambda v, key=f"{name}.beta_f": self.update(**{key: v}), log=True)
        self.sliders["temp"] = inputs.slider(
            "ambient (°C)", kelvin_to_celsius(design.temp), *TEMP_SLIDER,
            lambda v: self.update(temp=celsius_to_kelvin(v)), step=0.5)
        for spec in design.topology.values:
            if spec.kind in ("supply", "load"):
                value = design.values[spec.name]
                if spec.kind == "supply":
                    low, high = (max(spec.low, SUPPLY_SLIDER[0] * value), min(spec.high, SUPPLY_SLIDER[1] * value))
                else:
                    low, high = curves.load_slider_range(self.evaluation)
                self.sliders[spec.name] = inputs.slider(
                    f"{spec.name} ({spec.unit})", value, low, high,
                    lambda v, key=spec.name: self.update(**{key: v}))
        self.conditions_box.children = [s.widget for s in self.sliders.values()]
        settings = [self.heating_choice.widget]
        if design.topology.resistors:
            settings.insert(0, self.series_choice.widget)
        if len(gains) > 1:  # the choice means something only with several bipolar transistors
            settings.append(self.common_choice.widget)
        self.settings_box.children = settings

    def _show_values(self):
        """Make every input show the present (last good) design."""
        design, evaluation = self.design, self.evaluation
        for name, field in self.fields.items():
            field.show(design.values[name], self.series, self.tolerances.get(name))
        for key, echo in self.sliders.items():
            if key == "beta":
                shown, _ = curves.swept_gains(design, self.settings)
                inputs.show_slider(echo, design.devices[shown].beta_f, log=True)
            elif key.endswith(".beta_f"):
                inputs.show_slider(echo, design.devices[key.split(".")[0]].beta_f, log=True)
            elif key == "temp":
                inputs.show_slider(echo, kelvin_to_celsius(design.temp))
            elif design.topology.value(key).kind == "load":
                inputs.show_slider(echo, design.values[key], *curves.load_slider_range(evaluation))
            else:
                inputs.show_slider(echo, design.values[key])
        self.series_choice.show(self.series)
        self.common_choice.show(self.settings.common_beta)
        self.heating_choice.show(self.settings.self_heating)


# Tabs as wide as their words, wrapping to a second row on a narrow column (none cut short).
_STYLE = ("<style>.biasbook-panel .lm-TabBar-content{flex-wrap:wrap}"
          ".biasbook-panel .lm-TabBar{min-height:var(--jp-widgets-horizontal-tab-height);height:auto;overflow:visible}"
          ".biasbook-panel .lm-TabBar-tab{flex:0 0 auto;min-width:0;max-width:none}</style>")


def _band_layout(**more):
    return widgets.Layout(display="flex", flex_flow="row wrap", width="100%", grid_gap="2px 12px", **more)


def _wrap(children=()):
    """A band whose items wrap to the next line when the column is narrow."""
    return widgets.Box(list(children), layout=_band_layout(align_items="flex-start"))


def _heading(text):
    return widgets.HTML(f'<div style="font-family:{theme.FONT};font-weight:600;color:{theme.INK};'
                        f'border-bottom:1px solid #c9d3dc;margin:8px 0 2px">{display.escape(text)}</div>',
                        layout=widgets.Layout(width="100%"))
