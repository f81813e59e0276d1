"""Two or more designs side by side: one table and one plot a reviewer compares at a glance.

Every number comes from each design's own :class:`kit.analysis.evaluation.Evaluation`
(and worst-case result, when a spec is given); this module only lines them up.
Names, titles and labels may come from records someone mailed: every text is
escaped (:mod:`kit.report.tables`).

Examples
--------
>>> import kit
>>> pair = compare([kit.design("divider_source", title="divider"), kit.design("basic_mirror")])
>>> [row[0] for row in pair.rows()][:4]
['circuit', 'I_out', 'R_out', 'compliance (load voltage)']
>>> "<table>" in pair.html()
True
"""

from __future__ import annotations

import math

from kit.quantities import format_quantity, format_temperature
from kit.report import tables
from kit.report.evaluation import resistance


def gain_sensitivity(evaluation):
    """S = (β/I)·dI/dβ with every transistor's forward gain moving together, or None without one.

    Normalised sensitivities of a common change add (first order), so this is
    the sum over the transistors' gains.
    """
    gains = [s.normalised for s in evaluation.sensitivities if s.parameter.endswith(".beta_f")]
    return sum(gains) if gains else None


def _gain_text(evaluation):
    value = gain_sensitivity(evaluation)
    return "— (no β_F)" if value is None else f"{value:+.3g}"


def _stress(evaluation):
    if evaluation.hottest is not None:
        part, watts, at, junction = evaluation.hottest
        return f"{part}: {format_quantity(watts, 'W')} at {format_quantity(at, 'V')}, T_j {format_temperature(junction)}"
    part, watts, at = evaluation.max_dissipation
    return f"{part}: {format_quantity(watts, 'W')} at {format_quantity(at, 'V')}"


def _worst(result):
    if result is None:
        return "not run (no spec)", "—"
    method = result.methods[result.decided_by]
    low, high, margin = method.texts()
    return f"{result.decided_by}: {low} … {high}", f"{'met' if result.met else 'NOT met'} (margin {margin})"


class Comparison:
    """Designs side by side (see :func:`compare`)."""

    def __init__(self, evaluations, worst_cases, names):
        self.evaluations = tuple(evaluations)
        self.worst_cases = tuple(worst_cases)
        self.names = tuple(names)

    def rows(self):
        """``[quantity, text per design...]``: circuit, current, R_out, compliance, tempco, gain
        sensitivity, stress and worst case."""
        out = [["circuit"] + [f"{e.design.topology.title} ({e.design.polarity.upper()})" for e in self.evaluations],
               ["I_out"] + [format_quantity(e.i_out, "A", 4) for e in self.evaluations],
               ["R_out"] + [resistance(e.r_out) for e in self.evaluations],
               ["compliance (load voltage)"] + [f"{format_quantity(e.compliance.low.voltage, 'V')} … "
                                                f"{format_quantity(e.compliance.high.voltage, 'V')}"
                                                for e in self.evaluations],
               ["low edge set by"] + [e.compliance.low.describe() for e in self.evaluations],
               ["tempco"] + [format_quantity(e.tempco, "ppm/K") for e in self.evaluations],
               ["β sensitivity (β/I)·dI/dβ, all gains together"] + [_gain_text(e) for e in self.evaluations],
               ["worst stress across compliance"] + [_stress(e) for e in self.evaluations]]
        if any(w is not None for w in self.worst_cases):
            worst = [_worst(w) for w in self.worst_cases]
            out.append(["worst-case range"] + [w[0] for w in worst])
            out.append(["spec"] + [w[1] for w in worst])
        return out

    def html(self):
        """The table as HTML (every text escaped)."""
        table = tables.table(["", *self.names], self.rows())
        return tables.wrap(tables.section("Designs side by side", table))

    def text(self):
        """The table as plain text, one quantity a line."""
        lines = [" | ".join(["", *self.names])]
        lines += [" | ".join(row) for row in self.rows()]
        return "\n".join(lines)

    def plot(self, points=300):
        """Bokeh figure: each design's I_out across its own compliance plus a margin, on one axis."""
        import numpy as np
        from bokeh.models import Range1d
        from bokeh.plotting import figure

        from kit.analysis.evaluation import sweep
        from kit.panels.theme import DASHES, FORMS, INK, current_scale, style_figure, style_legend

        scale, unit = current_scale(max(abs(e.i_out) for e in self.evaluations))
        fig = figure(width=640, frame_height=240, x_axis_label="load voltage V_load (V)",
                     y_axis_label=f"I_out ({unit})", title="I_out across compliance, design by design",
                     toolbar_location=None)
        colours = (INK,) + FORMS
        top = 0.0
        lowest, highest = math.inf, -math.inf
        for k, (e, name) in enumerate(zip(self.evaluations, self.names)):
            low, high = e.compliance.low.voltage, e.compliance.high.voltage
            span = max(high - low, 1.0)
            v_load = np.linspace(low - 0.06 * span, high + 0.04 * span, points)
            swept = sweep(e.design, "v_load", v_load)
            current = np.where(swept.converged, swept.i_out, np.nan) / scale  # unconverged: a gap
            inside = (v_load >= low) & (v_load <= high)
            top = max(top, float(np.nanmax(current[inside])))
            lowest, highest = min(lowest, v_load[0]), max(highest, v_load[-1])
            fig.line(v_load, current, line_width=2.5 if k == 0 else 2, color=colours[k % len(colours)],
                     line_dash="solid" if k == 0 else DASHES[(k - 1) % len(DASHES)], legend_label=name)
        fig.x_range = Range1d(lowest, highest)
        fig.y_range = Range1d(0, 1.08 * top)
        style_legend(style_figure(fig))
        fig.add_layout(fig.legend[0], "below")  # names never cover the curves
        return fig

    def _repr_html_(self):
        return self.html()

    def summary(self, title, revision="", author=""):
        """The review summary of the comparison: page one holds the table and every schematic."""
        return ComparisonSummary(self, title, revision, author)


class ComparisonSummary:
    """Page-one facts of a comparison review (the counterpart of :class:`kit.review.summary.ReviewSummary`)."""

    def __init__(self, comparison, title, revision="", author=""):
        import datetime
        import hashlib
        import json

        from kit.report.cautions import GENERAL, cautions
        from kit.review.summary import _schematic_svg, _versions, stress_text

        evaluations = comparison.evaluations
        designs = [e.design.to_dict() for e in evaluations]
        text = json.dumps(designs, sort_keys=True, separators=(",", ":"), default=str)
        caution_lines = list(GENERAL)
        for e in evaluations:
            caution_lines += [c for c in cautions(e) if c not in caution_lines]
        self.comparison = comparison
        self.data = {
            "title": title, "revision": revision or "—", "author": author or "—",
            "date": datetime.date.today().isoformat(),
            "content_hash": hashlib.sha256(text.encode()).hexdigest(), "hash_of": "designs' values",
            "topology": f"comparison of {len(evaluations)} designs",
            "polarity": ", ".join(sorted({e.design.polarity.upper() for e in evaluations})),
            "versions": _versions(), "headline": {}, "cautions": caution_lines,
            "comparison": {"names": list(comparison.names), "rows": comparison.rows(),
                           "stress": [stress_text(e) for e in evaluations],
                           "schematics": [_schematic_svg(e.design) for e in evaluations]},
        }

    def _repr_mimebundle_(self, include=None, exclude=None):
        from kit.review.summary import MIME

        return {"text/html": self.comparison.html(), MIME: self.data,
                "text/plain": f"comparison summary: {self.data['title']}"}


def compare(designs, spec=None, names=None):
    """Evaluate ``designs`` (and their worst case against ``spec``, if given) for a side-by-side view.

    Parameters
    ----------
    designs : sequence of Design
        Two or more designs (for example one current by a basic mirror, a Wilson and a Widlar).
    spec : Spec, optional
        One specification all are judged against.
    names : sequence of str, optional
        Column names; default each design's title, else its circuit's.
    """
    import kit

    designs = list(designs)
    if len(designs) < 2:
        from kit.errors import ParameterError

        raise ParameterError("a comparison needs two or more designs", parameter="designs",
                             value=len(designs), valid="2 or more")
    evaluations = [kit.evaluate(d) for d in designs]
    if spec is not None:
        from kit.analysis.worstcase import worst_case

        worst = [worst_case(d, spec) for d in designs]
    else:
        worst = [None] * len(designs)
    names = list(names) if names is not None else [d.title or d.topology.title for d in designs]
    return Comparison(evaluations, worst, names)
