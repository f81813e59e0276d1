"""Every example record evaluates: its exact solve converges with every device in its region.

One record per topology lives in examples/; a topology without one is a gap.
"""

from pathlib import Path

import pytest

import kit
from kit.record import load_record

EXAMPLES = sorted((Path(__file__).resolve().parents[1] / "examples").glob("*.toml"))


@pytest.mark.parametrize("path", EXAMPLES, ids=[p.stem for p in EXAMPLES])
def test_example_evaluates_with_every_device_in_its_region(path):
    record = load_record(path)
    evaluation = kit.evaluate(record.design, edge=record.edge, network=record.thermal)
    assert evaluation.points.converged.all()
    structure = record.design.structure
    for name, region in evaluation.regions.items():
        assert region == structure.part(name).kind.good_region, (name, region)
    assert evaluation.compliance.contains(record.design.values["v_load"])
    # positive in the topology's sense; a bidirectional pump's follows its input's sign
    if len(record.design.topology.polarities) == 2:
        assert evaluation.i_out > 0
    else:
        assert evaluation.i_out != 0
    assert evaluation.r_out > 0


def test_every_topology_has_an_example():
    covered = {load_record(p).design.topology.key for p in EXAMPLES}
    assert {t.key for t in kit.list_topologies()} <= covered
