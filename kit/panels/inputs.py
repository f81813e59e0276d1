"""Input widgets of the design panel: value fields with E-series steppers, sliders.

Each widget reports what the designer did through a callback; the panel
validates, computes and only then shows the new state.  When the panel
writes a value back into a widget (after an update, or to undo a refused
one) the widget remembers it, so that echo is not taken for a new input.
"""

from __future__ import annotations

import math
import re

import ipywidgets as widgets

from kit.panels.entry import rounded, split_tolerance  # noqa: F401 -- the panel reads both from here
from kit.quantities import format_quantity

FIELD_DIGITS = 6  # enough to show every E192 value and most typed ones unchanged
LABEL_WIDTH = "110px"

class Echo:
    """A widget whose value the panel may set without triggering its callback.

    Parameters
    ----------
    widget : ipywidgets.ValueWidget
    callback : callable
        Called with the new value when the designer changes it.
    """

    def __init__(self, widget, callback):
        self.widget = widget
        self.callback = callback
        self.shown = widget.value
        self.quiet = False
        widget.observe(self._changed, "value")

    def _changed(self, change):
        if self.quiet or change["new"] == self.shown:
            return
        self.callback(change["new"])

    def show(self, value, **bounds):
        """Display ``value`` (the panel's state) without calling back; ``bounds`` set min/max first."""
        self.shown = value
        self.quiet = True
        try:
            for name, bound in bounds.items():
                setattr(self.widget, name, bound)
            self.widget.value = value
        finally:
            self.quiet = False


def value_text(spec, value):
    """The text a field shows for ``value`` (SI) of value spec ``spec``."""
    if not spec.unit:
        return f"{value:.{FIELD_DIGITS}g}"
    return format_quantity(value, spec.unit, FIELD_DIGITS)


class ValueField:
    """A text field for one design value, with two E-series steppers for a resistor.

    Parameters
    ----------
    spec : kit.topologies.base.ValueSpec
    on_text : callable
        ``on_text(name, text)`` when the designer types a value.
    on_step : callable or None
        ``on_step(name, direction)`` with direction -1 or +1; None gives no steppers.
    """

    def __init__(self, spec, on_text, on_step=None):
        self.spec = spec
        unit = f" ({spec.unit})" if spec.unit else ""
        hint = " (a tolerance may follow: 4k7 5%)" if on_step else ""
        if spec.unit == "1/K":  # the field shows ppm/K; a bare number would be read per kelvin
            hint = " (write it with its unit: 20 ppm/K; a bare 20 would mean 20 per kelvin)"
        self.text = widgets.Text(
            value="", description=f"{spec.name}{unit}", continuous_update=False,
            tooltip=spec.description + hint, placeholder="ppm/K" if spec.unit == "1/K" else spec.unit or "number",
            style={"description_width": LABEL_WIDTH}, layout=widgets.Layout(width="250px"))
        self.echo = Echo(self.text, lambda text: on_text(spec.name, text))
        parts = [self.text]
        self.down = self.up = None
        if on_step is not None:
            self.down = widgets.Button(description="▼", layout=widgets.Layout(width="34px"))
            self.up = widgets.Button(description="▲", layout=widgets.Layout(width="34px"))
            self.down.on_click(lambda _: on_step(spec.name, -1))
            self.up.on_click(lambda _: on_step(spec.name, +1))
            parts += [self.down, self.up]
        self.widget = widgets.HBox(parts)

    def show(self, value, series=None, tolerance=None):
        text = value_text(self.spec, value)
        if tolerance is not None:
            text += f" {format_quantity(tolerance, '%', 3)}"
        self.echo.show(text)
        if self.down is not None and series:
            self.down.tooltip = f"next lower {series} value"
            self.up.tooltip = f"next higher {series} value"


def slider(description, value, low, high, callback, *, log=False, step=None, fmt=".3g"):
    """A slider (logarithmic for a gain) whose callback fires on release with a rounded value."""
    style = {"description_width": LABEL_WIDTH}
    layout = widgets.Layout(width="380px")
    if log:
        widget = widgets.FloatLogSlider(value=value, base=10, min=math.log10(low), max=math.log10(high),
                                        step=0.005, description=description, continuous_update=False,
                                        readout_format=fmt, style=style, layout=layout)
        return Echo(widget, lambda v: callback(rounded(v, low, high, log=True)))
    else:
        widget = widgets.FloatSlider(value=value, min=low, max=high, step=step or (high - low) / 400,
                                     description=description, continuous_update=False,
                                     readout_format=fmt, style=style, layout=layout)
    # The bounds may move (a load slider follows compliance): round within the present ones.
    return Echo(widget, lambda v: callback(rounded(v, widget.min, widget.max)))


def show_slider(echo, value, low=None, high=None, *, log=False):
    """Move a slider to ``value`` with bounds ``low, high`` (widened to hold the value)."""
    widget = echo.widget
    if log:
        value_at = math.log10(value)
        low = widget.min if low is None else math.log10(low)
        high = widget.max if high is None else math.log10(high)
    else:
        value_at = value
        low = widget.min if low is None else low
        high = widget.max if high is None else high
    low, high = min(low, value_at), max(high, value_at)
    # Widen to the union first, then narrow: the slider refuses min > max on the way.
    echo.show(widget.value, min=min(widget.min, low), max=max(widget.max, high))
    bounds = {"min": low, "max": high}
    if not log:
        bounds["step"] = (high - low) / 400 if high > low else 0.01
    echo.show(value, **bounds)
