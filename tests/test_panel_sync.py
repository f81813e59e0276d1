"""What a design panel sends to the browser per change (kit/panels/sync.py).

The messages are read where they leave the kernel (``Widget._send``); the
patch each carries is decoded with Bokeh's own JSON reader.  Batching and
holding must change only how many messages go out and when, never what the
browser ends with: the last patch of a held figure carries the newest data.
Common practice, no source: counts of messages per change are this
project's own design.
"""

from __future__ import annotations

import json

import numpy as np
import pytest

import kit
from kit.panels import DesignPanel
from kit.panels.curves import Settings
from kit.panels.sync import BatchedBokehModel, hold_while_hidden


@pytest.fixture()
def panel():
    return DesignPanel(kit.design("divider_source", "npn"), settings=Settings(points=30))


@pytest.fixture()
def sent(monkeypatch):
    """Every message a widget sends: (widget, content)."""
    from ipywidgets import Widget

    out = []
    original = Widget._send

    def record(self, msg, buffers=None):
        out.append((self, msg))
        return original(self, msg, buffers)

    monkeypatch.setattr(Widget, "_send", record)
    return out


def _patches(sent, model):
    """The decoded PATCH-DOC contents sent by ``model``, in order."""
    parts = [msg["content"]["payload"] for widget, msg in sent
             if widget is model and msg.get("method") == "custom" and msg["content"].get("msg") == "patch"]
    assert len(parts) % 3 == 0  # header, metadata, content: no separate buffers
    return [json.loads(parts[k + 2]) for k in range(0, len(parts), 3)]


def test_a_change_sends_one_patch_for_the_open_figure_and_none_for_closed_ones(panel, sent):
    assert panel.tabs.selected_index == 0  # the load view
    assert panel.update(r_e="2k0")
    load = _patches(sent, panel.bokeh["load"])
    assert len(load) == 1 and len(load[0]["events"]) > 3  # every change of the figure in one patch
    for name in ("beta", "temp", "sensitivity", "tempco"):
        assert _patches(sent, panel.bokeh[name]) == []
    # The ledger and the drawing, closed, send nothing either; their values are the new design's.
    assert not [m for w, m in sent if w in (panel.ledger, panel.schematic)]
    assert "2 kΩ" in panel.schematic_html


def test_opening_a_view_sends_what_it_held_as_one_patch_with_the_newest_data(panel, sent):
    assert panel.update(r_e="2k0")
    assert panel.update(r_e="2k4")
    assert not _patches(sent, panel.bokeh["temp"])
    panel.tabs.selected_index = panel.tabs.titles.index("temperature")
    temp = _patches(sent, panel.bokeh["temp"])
    assert len(temp) == 1
    # Two changes held, one property change each kept: the data of the source is sent once, the newest.
    source = panel.sources["temp"]
    data_events = [e for e in temp[0]["events"] if e.get("attr") == "data" and e["model"]["id"] == source.id]
    assert len(data_events) == 1
    sent_columns = _columns(data_events[0]["data"])  # a ColumnDataChanged event: the whole data
    np.testing.assert_array_equal(sent_columns["i_out"], source.data["i_out"])  # the newest design's
    assert panel.design.values["r_e"] == 2400.0
    # Now open, the temperature view sends each further change at once; the closed load view does not.
    assert panel.update(r_e="2k7")
    assert len(_patches(sent, panel.bokeh["temp"])) == 2
    assert len(_patches(sent, panel.bokeh["load"])) == 2  # r_e 2k0 and 2k4, sent while it was open


def _columns(encoded):
    """Column name -> values of a data dict as Bokeh's serializer wrote it (arrays inline: gzip, base64)."""
    import base64
    import gzip

    out = {}
    for key, value in encoded["entries"]:
        if isinstance(value, dict) and value.get("type") == "ndarray":
            out[key] = np.frombuffer(gzip.decompress(base64.b64decode(value["array"]["data"])),
                                     dtype=value["dtype"])
        else:
            out[key] = value
    return out


def test_the_ledger_is_sent_when_its_tab_opens(panel, sent):
    assert panel.update(r_e="2k0")
    assert not [m for w, m in sent if w is panel.ledger]
    panel.tabs.selected_index = panel.tabs.titles.index("ledger")
    states = [m for w, m in sent if w is panel.ledger and m.get("method") == "update"]
    assert len(states) == 1 and states[0]["state"]["value"] == panel.ledger_html


def test_batched_model_sends_inline_arrays_and_the_same_data():
    from bokeh.models import ColumnDataSource
    from bokeh.plotting import figure

    fig = figure()
    source = ColumnDataSource(data={"x": [0.0], "y": [0.0]})
    fig.line("x", "y", source=source)
    model = BatchedBokehModel(fig)
    messages = []
    model.send = lambda content, buffers=None: messages.append((content, buffers))
    with model.batch():
        fig.title.text = "first"
        source.data = {"x": np.arange(5.0), "y": np.arange(5.0) ** 2}
        fig.title.text = "second"
    assert model.sent_patches == 1 and len(messages) == 3 and all(b is None for _, b in messages)
    events = json.loads(messages[2][0]["payload"])["events"]
    assert [e["attr"] for e in events] == ["text", "data", "text"]
    assert events[-1]["new"] == "second"
    model.hidden = True
    source.data = {"x": np.arange(3.0), "y": np.ones(3)}
    fig.title.text = "third"
    fig.title.text = "fourth"
    assert model.sent_patches == 1  # held while hidden
    model.hidden = False
    events = json.loads(messages[-1][0]["payload"])["events"]
    assert model.sent_patches == 2 and [e["attr"] for e in events] == ["data", "text"]
    assert events[-1]["new"] == "fourth"


def test_a_held_widget_keeps_its_value_and_sends_it_once_on_release():
    import ipywidgets

    html = ipywidgets.HTML("a")
    messages = []
    html._send = lambda msg, buffers=None: messages.append(msg)
    hold_while_hidden(html, True)
    html.value = "b"
    html.value = "c"
    with html.hold_sync():  # a batch inside the hold sends nothing either
        html.value = "d"
    assert html.value == "d" and messages == []
    hold_while_hidden(html, False)
    assert [m["state"] for m in messages] == [{"value": "d"}]
