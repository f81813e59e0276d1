"""The results summary a review opens with, shown in the notebook and lifted onto page one.

A design notebook ends with ``review_summary(...)``.  In Jupyter it shows as
a table; it also carries its content as JSON under the kit's own MIME type
:data:`MIME`, which :mod:`kit.review.build` reads from the executed notebook
to write the title block and the first page of the PDF.
"""

from __future__ import annotations

import datetime
import hashlib
import json

from kit.report import tables as display
from kit.report.cautions import GENERAL, cautions
from kit.report.evaluation import headline
from kit.quantities import format_quantity

MIME = "application/vnd.biasbook.review+json"

def _versions():
    import numpy
    import sympy

    import kit

    return {"biasbook": kit.__version__, "sympy": sympy.__version__, "numpy": numpy.__version__}


def _design_hash(design):
    text = json.dumps(design.to_dict(), sort_keys=True, separators=(",", ":"), default=str)
    return hashlib.sha256(text.encode()).hexdigest()


class ReviewSummary:
    """Title-block facts and page-one results of one design (see the module docstring)."""

    def __init__(self, evaluation, worst_case=None, record=None, revision="", author=""):
        self.evaluation = evaluation
        self.worst_case = worst_case
        self.record = record
        design = evaluation.design
        self.data = {
            "title": (record.title if record else design.title) or design.topology.title,
            "revision": (record.revision if record else revision) or "—",
            "author": (record.author if record else author) or "—",
            "date": datetime.date.today().isoformat(),
            "content_hash": record.content_hash() if record else _design_hash(design),
            "hash_of": "design record" if record else "design values",
            "topology": design.topology.title,
            "polarity": design.polarity.upper(),
            "versions": _versions(),
            "headline": headline(evaluation),
            "ledger": [{"label": e.label, "value": format_quantity(e.value, "A", 4),
                        "error": f"{e.error:+.3%}", "assumes": "; ".join(e.assumptions)}
                       for e in evaluation.ledger],
            "exact": format_quantity(evaluation.i_out, "A", 5),
            "r_out_agreement": {k: f"{v / evaluation.r_out - 1:+.2e}" for k, v in evaluation.r_out_forms.items()},
            "notes": list(design.topology.notes),
            "cautions": list(GENERAL) + cautions(evaluation),
            "spec": self._spec_rows(),
            "met": None if worst_case is None else bool(worst_case.met),
        }

    def _spec_rows(self):
        wc = self.worst_case
        if wc is None:
            return []
        lo, hi = wc.spec.limits
        rows = [{"method": "nominal (exact)", "low": format_quantity(wc.nominal, "A", 4),
                 "high": format_quantity(wc.nominal, "A", 4),
                 "margin": f"{wc.spec.margin(wc.nominal, wc.nominal):+.2%}",
                 "verdict": "pass" if lo <= wc.nominal <= hi else "fail"}]
        for m in wc.methods.values():
            low, high, margin = m.texts()
            rows.append({"method": m.method, "low": low, "high": high, "margin": margin,
                         "verdict": "pass" if m.passed else "fail"})
        return [{"spec": f"{format_quantity(wc.spec.i_target, 'A', 4)} ± {wc.spec.tolerance:.2%}"}] + rows

    def html(self):
        d = self.data
        head = display.table(["quantity", "value"], list(d["headline"].items()), numeric=(1,))
        ledger = display.table(["simplification", "value", "error vs exact", "assumes"],
                               [[r["label"], r["value"], r["error"], r["assumes"]] for r in d["ledger"]],
                               numeric=(1, 2))
        parts = [display.section("Results at the design point (exact solve)", head),
                 display.section(f"Hand formulas against the exact solution ({d['exact']})", ledger)]
        if d["spec"]:
            spec, rows = d["spec"][0]["spec"], d["spec"][1:]
            table = display.table(["method", "lowest", "highest", "margin", "verdict"],
                                  [[r["method"], r["low"], r["high"], r["margin"], r["verdict"]] for r in rows],
                                  numeric=(1, 2, 3))
            verdict = "met" if d["met"] else "NOT met"
            parts.append(display.section(f"Specification {spec}: {verdict} (extreme-value bound)", table))
        if d["notes"]:
            parts.append(display.section("Design notes", "".join(f"<p>{display.escape(n)}</p>" for n in d["notes"])))
        return display.wrap("".join(parts))

    def _repr_mimebundle_(self, include=None, exclude=None):
        return {"text/html": self.html(), MIME: self.data,
                "text/plain": f"review summary: {self.data['title']}"}


def review_summary(evaluation, worst_case=None, record=None, **header):
    """The summary object a design notebook displays last (see :class:`ReviewSummary`)."""
    return ReviewSummary(evaluation, worst_case, record, **header)
