"""One check for the test files of MOSFET circuits: nothing is worded for a bipolar part.

Common practice, no source: a MOSFET saturates (V_DS >= V_ov) and has a gate,
drain and source; it has no β, base, collector or emitter.
"""

BIPOLAR_WORDS = ("npn", "pnp", "beta", "β", "forward active", "ebers", "moll", "base", "collector",
                 "emitter", "v_be", "v_cc")


def assert_no_bipolar_words(ev, top):
    """Every text of the evaluation ``ev`` of topology ``top`` avoids :data:`BIPOLAR_WORDS`."""
    s = ev.design.structure
    words = [ev.compliance.low.text, ev.compliance.high.text, top.description, top.title]
    words += list(top.notes) + [v.description for v in top.values]
    words += [label for pair in s.labels.values() for label in pair]
    words += [f.label for f in s.closed_forms] + [a for f in s.closed_forms for a in f.assumption_texts]
    words += [label for _, label in s.extras] + [label for label, _ in ev.tempco_budget]
    text = " ".join(words).lower().replace("{", "").replace("}", "")
    for bipolar in BIPOLAR_WORDS:
        assert bipolar not in text, bipolar
