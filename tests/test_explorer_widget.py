"""The explorer in-process: what one update sends to the page and that every readout follows it.

Each widget's comm is given a recorder, so the messages a real kernel would send
are counted without a browser (the browser tests check what the page then shows).
"""

from __future__ import annotations

import json

import numpy as np
import pytest

import posekit as pk
from posekit.analysis import euler_solutions, lock_gauge
from posekit.view.frames import frame_points
from posekit.widgets import Explorer
from posekit.widgets.controls import OneMessageFigure


class Recorder:
    """Keeps every message a widget sends through its comm (in-process the comm sends nowhere)."""

    def __init__(self, widget):
        self.sent = []
        widget.comm.publish_msg = self._publish  # the one method every comm send goes through

    def _publish(self, msg_type, data=None, metadata=None, buffers=None, **_):
        if msg_type == "comm_msg":
            self.sent.append(json.loads(json.dumps(data, default=str)))


def _listen(widget) -> Recorder:
    return Recorder(widget)


def test_restyle_goes_out_as_one_update_message():
    import plotly.graph_objects as go

    fig = OneMessageFigure(go.Figure([go.Scatter3d(x=[0, 1], y=[0, 0], z=[0, 0]), go.Scatter3d(x=[0], y=[0], z=[0])]))
    comm = _listen(fig)
    for k in (1, 2):
        comm.sent.clear()
        fig.plotly_restyle({"x": [[0, 10 * k]], "visible": [k == 2]}, trace_indexes=[0])
        assert len(comm.sent) == 1
        msg = comm.sent[0]
        assert msg["method"] == "update"
        restyle = msg["state"]["_py2js_restyle"]
        assert restyle["restyle_data"] == {"x": [[0, 10 * k]], "visible": [k == 2]}
        assert restyle["restyle_traces"] == [0]
        # the page reads the edit counters from the same message
        assert msg["state"]["_last_trace_edit_id"] == restyle["trace_edit_id"] == fig._last_trace_edit_id
        assert msg["state"]["_last_layout_edit_id"] == restyle["layout_edit_id"] == fig._last_layout_edit_id
        # the kernel side is as plotly leaves it: data updated, the restyle trait back to None
        assert list(fig.data[0].x) == [0, 10 * k] and fig._py2js_restyle is None
        assert fig._property_lock == {}


def _traces(fig):
    return [{k: v for k, v in t.items() if k != "uid"} for t in fig.to_dict()["data"]]  # uid: random per trace


def test_restyle_changes_the_kernel_side_figure_exactly_as_plotly_does():
    import plotly.graph_objects as go

    def build(cls):
        return cls(go.Figure([go.Scatter3d(x=[0, 1], y=[0, 0], z=[0, 0], name="a"), go.Mesh3d(x=[0], y=[0], z=[0]),
                              go.Scatter3d(x=[1], y=[1], z=[1], visible=False)]))

    mine, plain = build(OneMessageFigure), build(go.FigureWidget)
    steps = [({"x": [[0, 2], [5]], "visible": [True, False]}, [0, 1]),
             ({"x": [[0, 2]], "y": [[3, 4]]}, [0]),  # x unchanged: only y is a change
             ({"visible": True}, [0, 1, 2]),  # a scalar applies to every trace
             ({"line.width": 3, "name": "b"}, [0]),  # a nested path takes plotly's route
             ({"x": [[7, 8], [9]]}, [2, 1])]
    for data, traces in steps:
        assert (mine._perform_plotly_restyle(dict(data), traces) ==
                plain._perform_plotly_restyle(dict(data), traces))
        assert _traces(mine) == _traces(plain)
    for fig in (mine, plain):  # bad keys and trace numbers fail as in plotly
        with pytest.raises(ValueError, match="Invalid property path"):
            fig.plotly_restyle({"colour": [1]}, trace_indexes=[0])
        with pytest.raises(ValueError, match="out of range"):
            fig._perform_plotly_restyle({"x": [[1]]}, [7])


def test_batch_update_goes_out_as_one_update_message():
    import plotly.graph_objects as go

    fig = OneMessageFigure(go.Figure([go.Scatter(x=[0, 1], y=[0, 0])]))
    comm = _listen(fig)
    with fig.batch_update():
        fig.data[0].y = [2, 3]
        fig.layout.title = "moved"
    assert len(comm.sent) == 1
    update = comm.sent[0]["state"]["_py2js_update"]
    assert update["style_data"] == {"y": [[2, 3]]} and update["layout_data"] == {"title": {"text": "moved"}}
    assert comm.sent[0]["state"]["_last_trace_edit_id"] == update["trace_edit_id"] == fig._last_trace_edit_id
    assert list(fig.data[0].y) == [2, 3] and fig._py2js_update is None and fig._property_lock == {}


def test_restyle_inside_a_hold_keeps_plotlys_route():
    import plotly.graph_objects as go

    fig = OneMessageFigure(go.Figure([go.Scatter3d(x=[0, 1], y=[0, 0], z=[0, 0])]))
    with fig.hold_sync():
        fig.plotly_restyle({"x": [[0, 3]]}, trace_indexes=[0])
    assert list(fig.data[0].x) == [0, 3]


def test_one_slider_update_sends_one_plot_message_and_fresh_readouts():
    conv = "sequence=z-y-x unit=degrees"
    ex = Explorer(angles=(30.0, -10.0, 0.0), convention=conv)
    plot, readouts, words = _listen(ex.figure), _listen(ex.readouts), _listen(ex.words)
    for a in (31.0, 32.0, 90.0):
        plot.sent.clear(), readouts.sent.clear()
        ex.angle_rows[1].slider.set_state({"value": a})  # as the page sends a slider move
        assert ex.angles == (30.0, a, 0.0)
        assert len(plot.sent) == 1 and len(readouts.sent) == 1
        R = pk.read_rotation(ex.angles, "euler", conv)
        sent_x = plot.sent[0]["state"]["_py2js_restyle"]["restyle_data"]["x"][0]
        want_x = frame_points(R)[0]
        np.testing.assert_allclose([np.nan if v is None else v for v in sent_x],
                                   [np.nan if v is None else v for v in want_x], atol=1e-12)
        html = readouts.sent[0]["state"]["value"]
        assert html == ex.readouts.value
        gauge = float(lock_gauge(R, conv).gauge)
        assert f"<b>{gauge:.4f}</b>" in html
        if a == 90.0:
            assert "GIMBAL LOCK. " + euler_solutions(R, conv).words() in html.replace("&#x27;", "'")
    assert words.sent == []  # the convention did not change, so its words were not sent again


@pytest.mark.parametrize("text", ["sequence=x-y-x axes=extrinsic unit=radians",
                                  "sequence=z-x-z wrap=positive unit=degrees action=passive",
                                  "sequence=y-z-x direction=child-from-parent scalar=last algebra=jpl"])
def test_convention_change_updates_words_labels_and_readouts(text):
    ex = Explorer(angles=(0.3, 0.2, 0.1), convention="sequence=z-y-x")
    new = pk.Convention.parse(text)
    ex.convention = new.to_text()
    assert ex.words.value == pk.view.readouts.words_html("In words: " + new.describe() + ".")
    assert f"about {'fixed ' if not new.intrinsic else ''}{new.axes_letters[0]}" in ex.angle_rows[0].label.value
    assert ex.bar.settings() == {f: getattr(new, f) for f in new.__dataclass_fields__}
    R = pk.read_rotation(ex.angles, "euler", new)
    q = pk.write_rotation(R, "quaternion", new)
    assert pk.view.readouts.numbers_html(("w", "x", "y", "z") if new.scalar == "first" else ("x", "y", "z", "w"),
                                         q, 6) in ex.readouts.value
    back = pk.write_rotation(R, "euler", new)
    assert pk.view.readouts.numbers_html(["read back 1", "2", "3"], back, 4) in ex.readouts.value


def test_unchecked_drawing_and_pole_readout_give_the_checked_results():
    from posekit.analysis import pole_readout
    from posekit.core.errors import NotOrthonormalError
    from posekit.view.frames import body_points

    rng = np.random.default_rng(3)
    for conv in ("sequence=z-y-x unit=degrees", "sequence=x-z-x axes=extrinsic action=passive wrap=positive"):
        for angles in (rng.uniform(-3, 3, 3), (0.2, np.pi / 2 if "z-y-x" not in conv else 90.0, 0.1)):
            R = pk.read_rotation(angles, "euler", conv)
            origin = rng.normal(size=3)
            assert frame_points(R, origin, 0.8, check=False) == frame_points(R, origin, 0.8)
            np.testing.assert_array_equal(body_points(R, origin, check=False), body_points(R, origin))
            fast, slow = pole_readout(R, conv, check=False), pole_readout(R, conv)
            np.testing.assert_array_equal(fast[0].regular, slow[0].regular)
            assert fast[0].words() == slow[0].words() and float(fast[1].gauge) == float(slow[1].gauge)
    # checking stays the default: a bad matrix still raises the typed error
    for call in (lambda: frame_points(2 * np.eye(3)), lambda: body_points(2 * np.eye(3)),
                 lambda: pole_readout(2 * np.eye(3))):
        with pytest.raises(NotOrthonormalError):
            call()


def test_palette_change_recolours_the_frames_in_one_message():
    from posekit.view.frames import PALETTES

    ex = Explorer(angles=(10.0, 20.0, 30.0))
    plot = _listen(ex.figure)
    ex.palette = "colour-blind"
    assert ex.figure.data[1].line.color[0] == PALETTES["colour-blind"][0]
    assert ex.figure.data[1].marker.color[-1] == PALETTES["colour-blind"][2]
    assert [m["state"].get("_py2js_update") is not None for m in plot.sent].count(True) == 1
    ex.palette = "standard"
    assert ex.figure.data[1].line.color[0] == PALETTES["standard"][0]
