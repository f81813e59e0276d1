"""On-demand fuzz run: many seeded random designs per topology, each outcome judged.

Off by default (marker ``fuzz``, deselected by ``addopts``); run it with::

    python -m pytest tests/test_fuzz.py -m fuzz --fuzz-count 1000

``--fuzz-count`` designs per topology (split over its polarities; default
1000) are drawn by ``tests/fuzzing.py``: a third near the defaults, a third
across the whole valid ranges, a third with one value out of range.  Each is
an accepted point judged sound from its own node voltages, a refusal naming
a parameter of the design, or bad (an impossible point accepted, a NaN, a
warning, a crash, a refusal naming nothing).  Any bad outcome fails its
topology; the table of outcomes is written to ``artifacts/fuzz-table.txt``
(or the file ``BIASBOOK_FUZZ_TABLE`` names).
"""

from __future__ import annotations

import collections
import os
import zlib
from pathlib import Path

import numpy as np
import pytest

from fuzzing import MODES, every_topology, outcome, random_design

TOPOLOGIES = every_topology()
KEYS = list(dict.fromkeys(key for key, _ in TOPOLOGIES))
# Two runs side by side (one per core) each name their own table.
TABLE = Path(os.environ.get("BIASBOOK_FUZZ_TABLE",
                            Path(__file__).resolve().parents[1] / "artifacts" / "fuzz-table.txt"))

pytestmark = pytest.mark.fuzz


@pytest.fixture(scope="module")
def table():
    rows = {}
    yield rows
    TABLE.parent.mkdir(exist_ok=True)
    lines = [f"{'topology':34} {'accepted':>8} {'refused':>8} {'bad':>4}  refused by parameter"]
    totals = collections.Counter()
    for key, counts in rows.items():
        refused = counts["refused"]
        by = ", ".join(f"{name} {n}" for name, n in counts["by"].most_common())
        lines.append(f"{key:34} {counts['accepted']:>8} {sum(refused.values()):>8} {counts['bad']:>4}  {by}")
        totals.update({"accepted": counts["accepted"], "refused": sum(refused.values()), "bad": counts["bad"]})
    lines.append(f"{'total':34} {totals['accepted']:>8} {totals['refused']:>8} {totals['bad']:>4}")
    TABLE.write_text("\n".join(lines) + "\n", encoding="utf-8")


@pytest.mark.parametrize("key", KEYS)
def test_fuzzed_designs_are_sound_or_refused_by_name(key, table, fuzz_count):
    polarities = [pol for k, pol in TOPOLOGIES if k == key]
    counts = {"accepted": 0, "bad": 0, "refused": collections.Counter(), "by": collections.Counter()}
    bad = []
    for n, polarity in enumerate(polarities):
        rng = np.random.default_rng(zlib.crc32(f"fuzz/{key}/{polarity}".encode()))
        share = fuzz_count // len(polarities) + (1 if n < fuzz_count % len(polarities) else 0)
        for k in range(share):
            values = random_design(rng, key, polarity, MODES[k % len(MODES)])
            kind, why = outcome(values, key, polarity)
            if kind == "accepted":
                counts["accepted"] += 1
            elif kind == "refused":
                counts["refused"][polarity] += 1
                # the kind of parameter: "Q2.beta_tc" counts as "beta_tc"
                counts["by"][why.split(".", 1)[-1]] += 1
            else:
                counts["bad"] += 1
                bad.append((polarity, values, why))
    table[key] = counts
    assert not bad, bad[:5]
