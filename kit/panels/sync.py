"""What the design panel sends to the browser per change: one message per figure.

A live Bokeh figure in a notebook (:class:`jupyter_bokeh.widgets.BokehModel`)
sends each change of its document on its own: a new column set, an axis
label, a hover text each become a patch of three messages plus two per
numeric array, and the browser applies and redraws each one.  A change of
the panel touches some forty of them.  :class:`BatchedBokehModel` holds the
changes made inside :meth:`~BatchedBokehModel.batch` and sends them as one
patch, its arrays written inline (base64), so each figure gets three
messages and redraws once.  :func:`batched` does this for several figures
and holds the ipywidgets' state messages alike (one message per widget).

A view in a tab the designer does not look at is kept up to date in the
kernel but sends nothing (:attr:`BatchedBokehModel.hidden`,
:func:`hold_while_hidden`); what it held goes out, as one message, when its
tab is opened.  The browser then neither redraws hidden plots nor typesets
a hidden ledger on every change.
"""

from __future__ import annotations

import contextlib

from bokeh.core.serialization import Serializer
from bokeh.document.events import ColumnDataChangedEvent, ModelChangedEvent
from bokeh.protocol.messages.patch_doc import patch_doc
from bokeh.settings import SettingProvenance, settings
from jupyter_bokeh.widgets import BokehModel


class BatchedBokehModel(BokehModel):
    """A :class:`~jupyter_bokeh.widgets.BokehModel` that can send many changes as one patch.

    Outside :meth:`batch` it behaves as its parent (one patch per change),
    except that arrays travel inline instead of as separate buffers.

    Examples
    --------
    >>> from bokeh.plotting import figure
    >>> fig = figure()
    >>> line = fig.line([0, 1], [0, 1])
    >>> model = BatchedBokehModel(fig)
    >>> with model.batch():
    ...     fig.title.text = "one"
    ...     line.data_source.data = {"x": [0, 2], "y": [1, 3]}
    >>> model.sent_patches  # both changes went out together
    1
    """

    def __init__(self, model, **kwargs):
        self._held = None
        self._hidden = False
        self._waiting = []  # changes held while hidden, oldest first
        self.sent_patches = 0
        super().__init__(model, **kwargs)

    @property
    def hidden(self):
        """True while no one looks at the figure: changes wait, and go out as one patch when shown."""
        return self._hidden

    @hidden.setter
    def hidden(self, hidden):
        self._hidden = bool(hidden)
        if not self._hidden and self._waiting:
            events, self._waiting = _latest(self._waiting), []
            self._send_patch(events)

    def update_from_model(self, model):
        """Send the figure whole (as the parent does); changes waiting until then are in it."""
        self._waiting = []
        super().update_from_model(model)

    @contextlib.contextmanager
    def batch(self):
        """Hold every change of the figure's document until the block ends, then send them as one patch."""
        if self._held is not None:  # already holding: the outer block sends
            yield
            return
        self._held = []
        try:
            yield
        finally:
            events, self._held = self._held, None
            if events and self._hidden:
                self._waiting += events
            elif events:
                self._send_patch(events)

    def _document_patched(self, event):
        if event.setter is self:  # the browser made this change: it has it already
            return
        if self._held is not None:
            self._held.append(event)
        elif self._hidden:
            self._waiting.append(event)
        else:
            self._send_patch([event])

    def _send_patch(self, events):
        # As bokeh's PATCH-DOC message, but with the arrays inline: a buffer costs two
        # more messages, each a round through the server's websocket.
        document = events[0].document
        serializer = Serializer(references=document.models.synced_references, deferred=False)
        with _stored_arrays():
            content = {"events": serializer.encode(events)}
        document.models.flush_synced(lambda model: not serializer.has_ref(model))
        message = patch_doc(patch_doc.create_header(), {}, content)
        for part in (message.header_json, message.metadata_json, message.content_json):
            self.send({"msg": "patch", "payload": part})
        self.sent_patches += 1


@contextlib.contextmanager
def _stored_arrays():
    """Inline arrays stored, not compressed, while a patch is encoded.

    Plot columns are doubles that compress little (200 of them: 1.6 kB
    stored, 0.9-1.6 kB compressed) while compressing each costs about ten
    times the storing; the patch goes to the page over the kernel's own link.  A
    level the user set in Bokeh's settings is restored afterwards.
    """
    setting = settings.compression_level
    level, provenance = setting.get_value_with_provenance()
    setting.set_value(0)
    try:
        yield
    finally:
        if provenance is SettingProvenance.USER_SET:
            setting.set_value(level)
        else:
            setting.unset_value()


def _latest(events):
    """``events`` without the changes a later one replaces whole (the browser needs only the last)."""
    def whole(event):  # a new value of the whole property
        return isinstance(event, ModelChangedEvent) or (isinstance(event, ColumnDataChangedEvent)
                                                        and event.cols is None)

    last = {}
    for k, event in enumerate(events):
        if whole(event):
            last[event.model.id, event.attr] = k
    return [event for k, event in enumerate(events)
            if not whole(event) or last[event.model.id, event.attr] == k]


def hold_while_hidden(widget, hidden):
    """Hold (``hidden``) or release the state messages of an ipywidget.

    While held, the widget's value changes in the kernel as usual but nothing
    is sent; on release its changed state goes out in one message.  Uses the
    same hold as :meth:`ipywidgets.Widget.hold_sync`, so a batch inside it
    does not send either.
    """
    if hidden:
        widget._holding_sync = True
    elif widget._holding_sync:
        widget._holding_sync = False
        if widget._states_to_send:
            widget.send_state(widget._states_to_send)
        widget._states_to_send.clear()


@contextlib.contextmanager
def batched(bokeh_models=(), widgets=()):
    """Hold the changes of ``bokeh_models`` (each one patch) and ``widgets`` (each one state message).

    The held messages go out when the block ends, widgets first (numbers are
    quick to show), then the figures.
    """
    with contextlib.ExitStack() as stack:
        for model in bokeh_models:
            if isinstance(model, BatchedBokehModel):
                stack.enter_context(model.batch())
        for widget in widgets:
            stack.enter_context(widget.hold_sync())
        yield
