"""What the design panel draws: columns of numbers from the kit's own sweeps.

No physics here.  Every current comes from :func:`kit.analysis.evaluation.sweep` (one
call for the load-voltage, gain and temperature curves together, its
parameter overrides broadcast as arrays) or, for the self-heated curve,
:func:`kit.analysis.temperature.temperature_sweep`; operating regions and
closed forms come from the returned :class:`kit.model.solve.OperatingPoints`.
This module only picks the ranges, slices the result and scales it for the
axes.  It imports no Bokeh, so benchmarks and tests can call it alone.
"""

from __future__ import annotations

import re
import textwrap
from dataclasses import dataclass, field

import numpy as np

from kit.errors import ParameterError
from kit.analysis.temperature import temperature_sweep
from kit.analysis.evaluation import sweep
from kit.quantities import format_quantity, kelvin_to_celsius
from kit.report.evaluation import tempco_by_mechanism
from kit.report.units import format_with_unit, per
from kit.panels import theme
from kit.panels.entry import rounded

POINTS = 200
HEATED_POINTS = 41  # the self-heated sweep iterates per point: fewer points
BETA_SPAN = 0.5  # ±50 % of nominal when no spec gives a gain range
SPEC_MARGIN = 0.25  # the gain axis reaches this fraction of the spec range beyond each end
LOAD_HEADROOM = 0.12  # space above the curves for the edge labels
DEFAULT_TEMPS = (233.15, 398.15)  # K: -40 … 125 °C, a common rated range (no source)
LOAD_PAD = 0.08  # fraction of the compliance span drawn beyond each edge ...
LOAD_PAD_LIMITS = (0.5, 2.0)  # V: ... at least and at most; deep saturation only squashes the plot

LEGEND_LINE = 38  # characters per line of a hand formula's legend entry

SOURCES = ("load", "load_forms", "load_outside", "load_edges", "load_point",
           "beta", "beta_point", "beta_band",
           "temp", "temp_heated", "temp_point", "temp_band",
           "sensitivity", "tempco")
VIEWS = ("load", "beta", "temp", "sensitivity", "tempco")  # one plot each
VIEW_SOURCES = {view: tuple(s for s in SOURCES if s.split("_")[0] == view) for view in VIEWS}


@dataclass(frozen=True)
class Settings:
    """How the panel draws (none of it changes the design).

    common_beta : one gain slider for every bipolar transistor; the gain curve
        then scales every transistor's β_F together.
    self_heating : add the self-heated curve to the temperature plot (slower).
    points : points per swept curve.
    """

    common_beta: bool = True
    self_heating: bool = False
    points: int = POINTS


@dataclass
class PlotData:
    """Source name -> columns, plus the axis texts and category orders."""

    columns: dict
    labels: dict = field(default_factory=dict)  # figure -> {"title", "x", "y"}
    factors: dict = field(default_factory=dict)  # bar figure -> categories, bottom first
    scale: tuple = (1.0, "A")


def gain_transistors(design):
    """Transistors that have a forward current gain β_F, in topology order."""
    return [name for name, model in design.devices.items() if "beta_f" in model.values]


def swept_gains(design, settings):
    """``(shown, varied)``: the transistor on the gain axis and those that move with it."""
    gains = gain_transistors(design)
    if not gains:
        return None, []
    out = design.structure.output_part
    shown = out if out in gains else gains[0]
    return shown, (gains if settings.common_beta else [shown])


def load_range(evaluation):
    """Load voltages across compliance and a margin beyond each edge."""
    low, high = evaluation.compliance.low.voltage, evaluation.compliance.high.voltage
    pad = min(max(LOAD_PAD * (high - low), LOAD_PAD_LIMITS[0]), LOAD_PAD_LIMITS[1])
    v_load = evaluation.design.values["v_load"]
    return min(low - pad, v_load), max(high + pad, v_load)


def load_slider_range(evaluation):
    """The load voltages a slider offers: compliance, its edges rounded inward.

    A slider never offers a voltage the kit would refuse (beyond an edge).
    """
    low, high = evaluation.compliance.low.voltage, evaluation.compliance.high.voltage
    return rounded(low, low, high), rounded(high, low, high)


def beta_range(design, spec, name):
    """``(low, high, spec bounds or None)`` of the gain axis for transistor ``name``.

    The spec's range with a quarter of it beyond each end (so its band shows
    where it stops), else ±50 % of nominal; always holding the nominal gain.
    """
    nominal = design.devices[name].beta_f
    bounds = None
    if spec is not None:
        bounds = spec.beta.get(name) or spec.beta.get(design.devices[name].polarity)
    if bounds is None:
        return nominal * (1 - BETA_SPAN), nominal * (1 + BETA_SPAN), None
    reach = SPEC_MARGIN * (bounds[1] - bounds[0])
    return max(min(bounds[0] - reach, nominal), 1.0), max(bounds[1] + reach, nominal), tuple(bounds)


def temp_range(design, spec):
    """``(low, high, spec bounds or None)`` in K: -40 … 125 °C, widened to the spec's range and the design's."""
    bounds = tuple(spec.temp) if spec is not None and spec.temp is not None else None
    low, high = DEFAULT_TEMPS if bounds is None else (min(bounds[0], DEFAULT_TEMPS[0]), max(bounds[1], DEFAULT_TEMPS[1]))
    return min(low, design.temp), max(high, design.temp), bounds


def _exact(points, block):
    current = np.where(points.converged, points.i_out, np.nan)[block]
    return np.where(np.isfinite(current), current, np.nan)


def _runs(mask):
    """(start, stop) index pairs of the True stretches of ``mask`` (stop exclusive)."""
    edges = np.flatnonzero(np.diff(np.concatenate([[0], mask.astype(int), [0]])))
    return list(zip(edges[::2], edges[1::2]))


def _outside(design, evaluation, points, block, x):
    """Stretches of load voltage where a transistor leaves the region it needs."""
    good = points.in_good_region(evaluation.edge)[block] & points.converged[block]
    regions = {n: r[block] for n, r in points.regions(evaluation.edge).items()}
    spans = []
    for start, stop in _runs(~good):
        what = set()
        for k in range(start, stop):
            if not points.converged[block][k]:
                what.add("no converged solve")
                continue
            for name, region in regions.items():
                if region[k] != design.structure.part(name).kind.good_region:
                    what.add(f"{name} {region[k]}")
        left = x[start] if start == 0 else 0.5 * (x[start - 1] + x[start])
        right = x[stop - 1] if stop == len(x) else 0.5 * (x[stop - 1] + x[stop])
        spans.append((left, right, ", ".join(sorted(what))))
    return spans


def _extent(*arrays):
    values = np.concatenate([np.ravel(a) for a in arrays if np.size(a)] or [np.zeros(1)])
    values = values[np.isfinite(values)]
    if values.size == 0:
        return 0.0, 1.0
    low, high = float(values.min()), float(values.max())
    pad = 0.04 * (high - low) if high > low else max(abs(high), 1.0) * 0.05
    return low - pad, high + pad


def plot_data(design, evaluation, spec=None, settings=Settings(), views=VIEWS):
    """Columns for the panel's sources, from one batched exact sweep.

    Parameters
    ----------
    design : kit.model.design.Design
    evaluation : kit.analysis.evaluation.Evaluation
        ``kit.evaluate(design)``; its compliance sets the load-voltage axis.
    spec : kit.analysis.spec.Spec, optional
        Gives the gain and temperature ranges.
    settings : Settings
    views : iterable of str
        The plots to make (of :data:`VIEWS`); default all.  Only their
        sources (:data:`VIEW_SOURCES`), axis texts and categories are in the
        result, and only their curves are solved.

    Returns
    -------
    PlotData

    Examples
    --------
    >>> import kit
    >>> d = kit.design("divider_source")
    >>> data = plot_data(d, kit.evaluate(d), settings=Settings(points=20))
    >>> len(data.columns["load"]["i_out"]), data.scale[1]
    (20, 'µA')
    """
    views = set(views)
    unknown = views - set(VIEWS)
    if unknown:
        raise ParameterError("unknown plot view", parameter="views", value=sorted(unknown)[0],
                             valid=", ".join(VIEWS))
    n = settings.points
    params = design.parameters()
    factor, unit = scale = theme.current_scale(evaluation.i_out)
    v_axis = np.linspace(*load_range(evaluation), n)
    t_low, t_high, t_spec = temp_range(design, spec)
    t_axis = np.linspace(t_low, t_high, n)
    shown, varied = swept_gains(design, settings)
    # One solve for all curves asked for: a block of n points sweeps the load, one the gain,
    # one the temperature (each point solves on its own: a block is the same alone or together).
    blocks = [name for name in ("load", "beta", "temp") if name in views and (name != "beta" or shown)]
    at = {name: slice(k * n, (k + 1) * n) for k, name in enumerate(blocks)}
    size = len(blocks) * n
    v_column = np.full(size, float(params["v_load"]))
    temp_column = np.full(size, float(params["temp"]))
    overrides = {"temp": temp_column}
    if "load" in at:
        v_column[at["load"]] = v_axis
    if "temp" in at:
        temp_column[at["temp"]] = t_axis
    if shown:
        b_low, b_high, b_spec = beta_range(design, spec, shown)
        b_axis = np.linspace(b_low, b_high, n)
        ratio = b_axis / params[f"{shown}.beta_f"]
        for name in gain_transistors(design):
            nominal = params[f"{name}.beta_f"]
            column = np.full(size, nominal)
            if name in varied and "beta" in at:
                column[at["beta"]] = nominal * ratio  # moved in proportion to the one on the axis
            overrides[f"{name}.beta_f"] = column
    points = sweep(design, "v_load", v_column, **overrides) if blocks else None
    columns, labels, factors = {}, {}, {}
    if "load" in views:
        _load_columns(columns, labels, design, params, evaluation, points, at["load"], v_axis, scale)
    if "beta" in views:
        _beta_columns(columns, labels, design, params, evaluation, points, at.get("beta"), shown, varied,
                      (b_axis, b_spec) if shown else None, scale)
    if "temp" in views:
        _temp_columns(columns, labels, design, evaluation, points, at["temp"], t_axis, (t_low, t_high, t_spec),
                      settings, scale)
    if "sensitivity" in views:
        _sensitivity_columns(columns, labels, factors, evaluation)
    if "tempco" in views:
        _tempco_columns(columns, labels, factors, evaluation)
    for view in views:
        for name in VIEW_SOURCES[view]:
            columns.setdefault(name, {})
    return PlotData(columns, labels, factors, scale)


def _load_columns(columns, labels, design, params, evaluation, points, load, v_axis, scale):
    """1. load voltage, with every closed form of the ledger."""
    factor, unit = scale
    i_load = _exact(points, load)
    forms = points.model.closed_forms(points.q)
    simplifications = design.structure.closed_forms
    form_ys = [np.where(np.isfinite(forms[s.key][load]), forms[s.key][load], np.nan) for s in simplifications]
    columns["load"] = {"v_load": v_axis, "i_out": i_load, "y": i_load / factor}
    columns["load_forms"] = {
        "xs": [v_axis] * len(form_ys), "ys": [y / factor for y in form_ys],
        "i_out": form_ys, "key": [s.key for s in simplifications],
        "label": [s.label for s in simplifications],
        # Two legend columns fit under the plot only with lines this short; a long formula wraps.
        "legend": [textwrap.fill(s.label, LEGEND_LINE, break_long_words=False) for s in simplifications],
        "colour": [theme.FORMS[k % len(theme.FORMS)] for k in range(len(form_ys))],
        "dash": [theme.DASHES[k % len(theme.DASHES)] for k in range(len(form_ys))]}
    # The plot's vertical range (set by the edge segments) follows the curves inside compliance
    # and zero: beyond the low edge a saturated transistor may reverse the current, which
    # would squash the plateau.
    inside = (v_axis >= evaluation.compliance.low.voltage) & (v_axis <= evaluation.compliance.high.voltage)
    y_low, y_high = _extent(np.zeros(1), i_load[inside] / factor, *(y[inside] / factor for y in form_ys))
    y_high += LOAD_HEADROOM * (y_high - y_low)
    spans = _outside(design, evaluation, points, load, v_axis)
    columns["load_outside"] = {"left": [s[0] for s in spans], "right": [s[1] for s in spans],
                               "bottom": [y_low] * len(spans), "top": [y_high] * len(spans),
                               "what": [s[2] for s in spans]}
    c = evaluation.compliance
    # The low edge's words at the foot of its line, the high edge's at the head of its own:
    # two edges close together never write over each other.
    columns["load_edges"] = {"x": [c.low.voltage, c.high.voltage], "y0": [y_low, y_low],
                             "y1": [y_high, y_high], "y_text": [y_low, y_high],
                             "text": [f"low edge {format_quantity(c.low.voltage, 'V', 4)}: {c.low.describe()}",
                                      f"high edge {format_quantity(c.high.voltage, 'V', 4)}: {c.high.describe()}"],
                             "align": ["left", "right"], "offset": [4, -4], "lift": [4, -14]}
    columns["load_point"] = {"x": [params["v_load"]], "y": [evaluation.i_out / factor],
                             "i_out": [evaluation.i_out]}
    # Titles start over the plot frame, not the axis: short enough for the frame of a printed page.
    labels["load"] = {"title": "Output current across compliance and beyond its edges",
                      "x": "load voltage V_load (V)", "y": f"I_out ({unit})"}


def _beta_columns(columns, labels, design, params, evaluation, points, block, shown, varied, axis, scale):
    """2. forward gain (empty without a bipolar transistor)."""
    factor, unit = scale
    if shown:
        b_axis, b_spec = axis
        i_beta = _exact(points, block)
        columns["beta"] = {"beta": b_axis, "i_out": i_beta, "y": i_beta / factor}
        columns["beta_point"] = {"x": [params[f"{shown}.beta_f"]], "y": [evaluation.i_out / factor],
                                 "i_out": [evaluation.i_out]}
        others = [t for t in varied if t != shown]
        how = f"{', '.join(others)} scaled alike" if others else \
            ("others fixed" if len(gain_transistors(design)) > 1 else "")
        labels["beta"] = {"title": "Output current against forward gain" + (" (spec range shaded)" if b_spec else ""),
                          "x": f"β_F of {shown}" + (f" ({how})" if how else ""), "y": f"I_out ({unit})"}
        band = b_spec
    else:
        columns["beta"] = {"beta": np.zeros(0), "i_out": np.zeros(0), "y": np.zeros(0)}
        columns["beta_point"] = {"x": [], "y": [], "i_out": []}
        labels["beta"] = {"title": "", "x": "", "y": ""}  # the panel shows no gain plot here
        band = None
    b_low_y, b_high_y = _extent(columns["beta"]["y"])
    columns["beta_band"] = _band(band, b_low_y, b_high_y)


def _temp_columns(columns, labels, design, evaluation, points, temp, t_axis, t_range, settings, scale):
    """3. temperature, with the self-heated curve when asked for."""
    factor, unit = scale
    t_low, t_high, t_spec = t_range
    i_temp = _exact(points, temp)
    t_celsius = kelvin_to_celsius(t_axis)
    columns["temp"] = {"temp_c": t_celsius, "temp": t_axis, "i_out": i_temp, "y": i_temp / factor}
    heated, heated_end = (_heated_sweep(design, t_low, t_high) if settings.self_heating else (None, ""))
    if heated is not None:
        columns["temp_heated"] = {"temp_c": kelvin_to_celsius(heated.temps), "temp": heated.temps,
                                  "i_out": heated.i_out_heated, "y": heated.i_out_heated / factor}
    else:
        columns["temp_heated"] = {"temp_c": np.zeros(0), "temp": np.zeros(0), "i_out": np.zeros(0),
                                  "y": np.zeros(0)}
    columns["temp_point"] = {"x": [kelvin_to_celsius(design.temp)], "y": [evaluation.i_out / factor],
                             "i_out": [evaluation.i_out]}
    t_low_y, t_high_y = _extent(columns["temp"]["y"], columns["temp_heated"]["y"])
    columns["temp_band"] = _band(None if t_spec is None else tuple(kelvin_to_celsius(np.array(t_spec))),
                                 t_low_y, t_high_y)
    labels["temp"] = {"title": "Output current against temperature" + (" (spec range shaded)" if t_spec else ""),
                      "x": "temperature (°C)" + heated_end, "y": f"I_out ({unit})"}


def _sensitivity_columns(columns, labels, factors, evaluation):
    """4. normalised sensitivities, largest on top."""
    ranked = sorted((s for s in evaluation.sensitivities if s.parameter != "temp"),
                    key=lambda s: abs(s.normalised))
    columns["sensitivity"] = {
        "name": [s.parameter for s in ranked], "value": [s.normalised for s in ranked],
        "text": [signed_text(s.normalised) for s in ranked],
        # dI_out/dp in its own unit (A per the parameter's unit, composed and simplified)
        "derivative": [format_with_unit(s.derivative, per("A", s.unit)) for s in ranked],
        "at": [format_quantity(s.value, s.unit, 4) if s.unit else f"{s.value:.4g}" for s in ranked],
        "colour": [theme.RAISES if s.normalised >= 0 else theme.LOWERS for s in ranked],
        "anchor": ["left" if s.normalised >= 0 else "right" for s in ranked],
        "offset": [4 if s.normalised >= 0 else -4 for s in ranked]}
    factors["sensitivity"] = [s.parameter for s in ranked]
    labels["sensitivity"] = {"title": "Normalised sensitivities S = (p / I_out) · dI_out/dp (exact)",
                             "x": "S (dimensionless: % change of I_out per % change of p)", "y": "parameter p"}


def _tempco_columns(columns, labels, factors, evaluation):
    """5. tempco budget, total at the bottom."""
    # Summed per mechanism: matched parts' opposite terms cancel instead of drawing ±140 000 ppm/K bars.
    budget = sorted(((f"{m} ({part_list(p)})" if p else m, v)
                     for m, p, v in tempco_by_mechanism(evaluation.tempco_budget)),
                    key=lambda item: abs(item[1]))
    names = ["total (exact)"] + [label for label, _ in budget]
    ppm = [evaluation.tempco * 1e6] + [value * 1e6 for _, value in budget]
    columns["tempco"] = {
        "name": names, "value": ppm, "text": [f"{v:+.4g}" for v in ppm],
        "with_unit": [format_quantity(v * 1e-6, "ppm/K", 4) for v in ppm],
        "colour": [theme.TOTAL] + [theme.RAISES if v >= 0 else theme.LOWERS for v in ppm[1:]],
        "anchor": ["left" if v >= 0 else "right" for v in ppm],
        "offset": [4 if v >= 0 else -4 for v in ppm]}
    factors["tempco"] = names
    labels["tempco"] = {"title": "Tempco budget by mechanism",
                        "x": "contribution to (1/I_out) dI_out/dT (ppm/K)", "y": "mechanism"}


def part_list(parts):
    """``"Q1, Q2, Q3, Q4"`` from ``"Q4, Q1, Q2, Q3"``: parts in the order a schematic numbers them.

    Examples
    --------
    >>> part_list("Q4, Q10, Q1, D2")
    'D2, Q1, Q4, Q10'
    """
    def key(name):
        return [int(t) if t.isdigit() else t for t in re.split(r"(\d+)", name)]

    return ", ".join(sorted(parts.split(", "), key=key))


def signed_text(value):
    """A bar's label: three decimals, or two digits with an exponent below 0.0005 (never "-0.000").

    Examples
    --------
    >>> signed_text(-0.9721), signed_text(2.3e-5), signed_text(0.0)
    ('-0.972', '+2.3e-05', '0')
    """
    if value == 0:
        return "0"
    return f"{value:+.3f}" if abs(value) >= 5e-4 else f"{value:+.1e}"


def _band(bounds, low, high):
    if bounds is None:
        return {"left": [], "right": [], "bottom": [], "top": []}
    return {"left": [bounds[0]], "right": [bounds[1]], "bottom": [low], "top": [high]}


def _heated_sweep(design, t_low, t_high):
    """The self-heated sweep, ended below the temperature where a part leaves its limits.

    Returns ``(sweep or None, words for the axis)``: a hot design (a pass device at
    its dissipation limit at 104 °C) still shows its curve up to there, and says so.
    """
    from kit.errors import DesignError

    try:
        return temperature_sweep(design, (t_low, t_high), points=HEATED_POINTS), ""
    except DesignError as err:
        if err.parameter != "temp" or not isinstance(err.value, float) or err.value - 1.0 <= t_low:
            return None, f"; no self-heated curve: {err.message}"
        end = err.value - 1.0
        words = f"; self-heated curve ends at {kelvin_to_celsius(end):.0f} °C: {err.message}"
    try:
        return temperature_sweep(design, (t_low, end), points=HEATED_POINTS), words
    except DesignError as err:
        return None, f"; no self-heated curve: {err.message}"
