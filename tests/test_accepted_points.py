"""Every accepted point of every topology is a possible one, judged from its own node voltages.

A deterministic property test over the whole registry: seeded designs near
each topology's defaults, across the valid ranges and with one value out of
range (``tests/fuzzing.py`` draws them; the scenarios are our own).  Each
outcome must be an accepted point that :func:`fuzzing.judge` finds sound
(each part in its kind's working region with every margin >= 0 and every
law in its domain, recomputed from the node voltages; KCL holds; no NaN
anywhere in the result; the reports render) or a refusal that names a
parameter of the design.  Warnings are errors throughout.  The on-demand
run of a thousand designs per topology is ``tests/test_fuzz.py``.
"""

from __future__ import annotations

import math
import zlib

import numpy as np
import pytest

import kit
from fuzzing import MODES, every_topology, judge, outcome, random_design

# Designs per topology and polarity: one of each kind of draw keeps the
# registry-wide run under a couple of minutes on two cores.
PER_POLARITY = len(MODES)
TOPOLOGIES = every_topology()


def _seed(key, polarity):
    return zlib.crc32(f"accepted/{key}/{polarity}".encode())


@pytest.mark.parametrize("key, polarity", TOPOLOGIES, ids=[f"{k}-{p}" for k, p in TOPOLOGIES])
def test_every_outcome_is_a_sound_point_or_a_named_refusal(key, polarity):
    rng = np.random.default_rng(_seed(key, polarity))
    bad = []
    for k in range(PER_POLARITY):
        values = random_design(rng, key, polarity, MODES[k % len(MODES)])
        kind, why = outcome(values, key, polarity)
        if kind == "bad":
            bad.append((values, why))
    assert not bad, bad


@pytest.mark.parametrize("key, polarity", TOPOLOGIES, ids=[f"{k}-{p}" for k, p in TOPOLOGIES])
def test_default_design_of_every_polarity_is_a_sound_point(key, polarity):
    # Defaults per polarity: a source's (pnp/pmos) defaults must work as well as a sink's.
    ev = kit.evaluate(kit.design(key, polarity))
    assert judge(ev) == []


def _bipolar_parts(key, polarity):
    return [name for name, model in kit.design(key, polarity).devices.items() if model.kind.key == "bjt"]


WITH_BIPOLAR = [(k, p) for k, p in TOPOLOGIES if _bipolar_parts(k, p)]


@pytest.mark.parametrize("key, polarity", WITH_BIPOLAR, ids=[f"{k}-{p}" for k, p in WITH_BIPOLAR])
def test_ideal_transistors_give_a_sound_point_without_nan(key, polarity):
    # V_A = inf on every bipolar part: forms with an Early voltage go to their limit.
    ideal = {name: {"v_a": math.inf} for name in _bipolar_parts(key, polarity)}
    ev = kit.evaluate(kit.design(key, polarity, devices=ideal))
    assert judge(ev) == []
