"""The explorer in-process: what one update sends to the page and that every readout follows it.

Each widget's comm is given a recorder, so the messages a real kernel would send
are counted without a browser (the browser tests check what the page then shows).
"""

from __future__ import annotations

import inspect
import json

import numpy as np
import pytest

import posekit as pk
from posekit.analysis import euler_solutions, lock_gauge
from posekit.view.frames import (DEFAULT_PALETTE, FRAME_UIDS, PALETTES, frame_figure, frame_points, overlay_uid,
                                  trace_index)
from posekit.view.readouts import DISPLAY_TOLERANCE, format_number, matrix_html, numbers_html
from posekit.view.sweep import SWEEP_TRACES
from posekit.widgets import Explorer
from posekit.widgets.controls import LiveFigure, NumberBox, restyle_traces
from posekit.widgets.explorer import EXTENT


def _tr(fig, uid):
    """The trace with this uid, looked up (never by position)."""
    return fig.data[trace_index(fig, uid)]


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


# --- numbers people can read --------------------------------------------------------------------
# (value, digits): magnitudes from float noise to millions, both signs, rounding edges
MAGNITUDES = [(v * sign, d) for sign in (1.0, -1.0) for d in (4, 6) for v in (
    4.3732626e-15, 9.99e-13, 1.0000001e-12, 3.3e-9, 1.23456789e-5, 0.00012345, 0.000999, 0.001, 0.0012345,
    0.1 + 0.2, 0.5, 0.8529, 1.0, 1.0000000000000002, 1.00005, 2.675, 31.0, 30.4, 179.99999, 123456.789,
    999999.4, 1e6, 4.2e7, 6.02214076e23)]


def _python_reference(v: float, digits: int, trim: bool) -> str:
    """What the rule says, written with Python's own format() (independent of numpy's formatter)."""
    if abs(v) < DISPLAY_TOLERANCE:
        return "0"
    if 10.0 ** (1 - digits) <= abs(v) < 1e6:
        text = format(v, f".{digits}f")
        return text.rstrip("0").rstrip(".") if trim else text
    text = format(v, f".{digits}e")
    if trim:
        mantissa, exponent = text.split("e")
        text = mantissa.rstrip("0").rstrip(".") + "e" + exponent
    return text


@pytest.mark.parametrize("value,digits", MAGNITUDES)
def test_format_number_matches_pythons_format_by_magnitude(value, digits):
    for trim in (False, True):
        got = format_number(value, digits, trim=trim)
        assert got == _python_reference(value, digits, trim), (value, digits, trim)
        if got != "0":  # what is shown reads back within its last digit
            assert abs(float(got) - value) <= 0.5 * 10.0 ** (-digits) * max(1.0, 10 ** np.floor(np.log10(abs(value))))


def test_format_number_cases_people_meet():
    assert format_number(4.3732626e-15, 6, trim=True) == "0"             # float noise reads 0, not 4.3732626
    assert format_number(0.1 + 0.2, 6, trim=True) == "0.3"               # no 0.30000000000000004
    assert format_number(2.5e-7, 6, trim=True) == "2.5e-07"              # a real small value keeps its exponent
    assert format_number(-0.0) == "0" and format_number(float("nan")) == "nan"
    assert format_number(float("-inf")) == "-inf"
    with pytest.raises(ValueError, match="digits"):
        format_number(1.0, 40)


def test_readout_cells_keep_the_raw_value_on_hover():
    html = numbers_html(("a", "b", "c"), (4.3732626e-15, 0.5, 1.0 / 3.0), 4)
    assert "<td title='4.3732626e-15'>0</td>" in html        # noise reads 0, the raw value in the title
    assert "<td>0.5000</td>" in html                          # exact: no title needed
    assert "<td title='0.3333333333333333'>0.3333</td>" in html
    R = pk.read_rotation([90.0, 0.0, 0.0], "euler", "unit=degrees")
    assert R[0, 0] != 0.0 and abs(R[0, 0]) < DISPLAY_TOLERANCE   # cos(90 degrees) in floating point
    assert f"<td title='{float(R[0, 0])!r}'>0</td>" in matrix_html(R)


def test_number_box_shows_readable_text_and_keeps_the_exact_value():
    box = NumberBox(4.3732626e-15)
    assert box.value == "0" and "4.3732626e-15" in box.tooltip and box.number == 4.3732626e-15
    box.number = 0.1 + 0.2
    assert box.value == "0.3" and box.number == 0.1 + 0.2 and "0.30000000000000004" in box.tooltip
    box.value = "0.3"            # the page sends the text back unchanged: the exact value stays
    assert box.number == 0.1 + 0.2
    box.value = "2.5e-7"         # typed
    assert box.number == 2.5e-7 and box.value == "2.5e-07" and box.tooltip is None
    box.value = "\u221212.5"     # a typographic minus sign is read as one
    assert box.number == -12.5 and box.value == "-12.5"
    box.value = "twelve"         # refused: the number is kept and the box says why on hover
    assert box.number == -12.5 and box.value == "-12.5" and "not a finite number" in box.tooltip
    box.value = "inf"
    assert box.number == -12.5


def _shown_readouts(ex) -> str:
    """The readout panels as shown once any pending update (deferred behind the plot when an event
    loop runs, as in a kernel) is done."""
    ex.flush_readouts()
    return ex.readouts.value


def test_explorer_boxes_and_readouts_use_the_one_formatter():
    ex = Explorer(angles=(90.0, 0.0, 0.0), translation=(1e-16, 0.25, 0.0))
    assert ex.translation_rows[0].box.value == "0" and "1e-16" in ex.translation_rows[0].box.tooltip
    assert ex.translation == (1e-16, 0.25, 0.0)   # shown as 0, kept exactly
    R = ex.rotation()
    written = pk.write_transform(pk.make_transform(R, ex.translation), "matrix", ex.convention_value())
    assert matrix_html(written) in _shown_readouts(ex)
    noise = [v for v in written.ravel() if v != 0.0 and abs(v) < DISPLAY_TOLERANCE]
    assert noise and all(f"<td title='{float(v)!r}'>0</td>" in _shown_readouts(ex) for v in noise)


# --- colours -----------------------------------------------------------------------------------
def test_the_colour_blind_palette_is_the_default_everywhere():
    from posekit.widgets import DebugDesk, GraphExplorer, PlanarExplorer, SingularityView, TrajectoryView
    from posekit.desk_scenarios import row_drive

    assert DEFAULT_PALETTE == "colour-blind" and "standard" in PALETTES
    # Okabe & Ito 2008 "Color Universal Design": vermillion, bluish green, blue
    assert PALETTES["colour-blind"] == ("#D55E00", "#009E73", "#0072B2")
    for cls in (Explorer, DebugDesk, GraphExplorer):
        assert cls.palette.default_value == DEFAULT_PALETTE, cls.__name__
        assert inspect.signature(cls.__init__).parameters["palette"].default == DEFAULT_PALETTE, cls.__name__
    want = PALETTES[DEFAULT_PALETTE]
    tips = lambda trace: (trace.line.color[1], trace.line.color[4], trace.line.color[7])  # noqa: E731
    ex = Explorer()
    assert ex.palette == DEFAULT_PALETTE and tips(_tr(ex.figure, FRAME_UIDS["frame"])) == want
    assert ex.palette_choice.value == DEFAULT_PALETTE
    view = TrajectoryView(row_drive().report())
    assert tips(_tr(view.pose_figure, FRAME_UIDS["frame"])) == want
    planar = PlanarExplorer()
    frame = _tr(planar.figure, FRAME_UIDS["frame"])
    assert (frame.marker.color[1], frame.marker.color[4]) == want[:2]
    for fig in (frame_figure(np.eye(3)), ):
        assert tips(_tr(fig, FRAME_UIDS["frame"])) == want
    # letters at every axis tip, so colour is never the only cue
    assert [t for t in _tr(ex.figure, FRAME_UIDS["frame"]).text if t] == ["x", "y", "z"]
    assert [t for t in frame.text if t.strip()] == ["x", "y"]
    # the sweep view's lines come from the same colour-blind safe set
    sv = SingularityView()
    euler = {sv.figure.data[trace_index(sv.figure, u)].line.color for u in SWEEP_TRACES["euler"]}
    assert euler <= {"#000000", "#E69F00", "#56B4E9", "#009E73", "#F0E442", "#0072B2", "#D55E00", "#CC79A7"}
    # the standard palette stays an option
    assert tips(_tr(Explorer(palette="standard").figure, FRAME_UIDS["frame"])) == PALETTES["standard"]
    with pytest.raises(pk.PoseInputError, match="palette"):
        Explorer(palette="rainbow")


# --- axes carry units --------------------------------------------------------------------------
def test_3d_axes_carry_units_and_a_millimetre_scene_fits_the_data():
    fig = frame_figure(np.eye(3), [200.0, -40.0, 10.0], unit="mm")
    scene = fig.layout.scene
    assert [scene[a].title.text for a in ("xaxis", "yaxis", "zaxis")] == ["parent x (mm)", "parent y (mm)",
                                                                          "parent z (mm)"]
    lo, hi = scene.xaxis.range
    assert 200.0 < hi < 400.0 and lo == -hi          # fits 200 mm, not a 1-unit scene nor +-200 m of empty space
    frame = _tr(fig, FRAME_UIDS["frame"])
    assert frame.x[1] - frame.x[0] >= 0.1 * hi        # arrows grow with the data: still visible
    assert frame_figure(np.eye(3)).layout.scene.xaxis.title.text == "parent x (m)"
    for a in ("xaxis", "yaxis", "zaxis"):
        assert scene[a].exponentformat == "power"
    ex = Explorer(translation=(0.0, 0.0, 0.0))
    assert ex.figure.layout.scene.zaxis.title.text == "parent z (m)"
    assert "m</span>" in ex.translation_rows[0].label.value
    ex.translation = (250.0, 0.0, 0.0)                 # typed far beyond the sliders' reach
    hi = ex.figure.layout.scene.xaxis.range[1]
    assert 250.0 < hi <= 400.0
    tip = _tr(ex.figure, FRAME_UIDS["frame"])
    assert tip.x[0] == 250.0 and tip.x[1] - tip.x[0] > 10.0
    ex.translation = (0.5, 0.0, 0.0)                   # back within reach: the fixed scene again
    assert ex.figure.layout.scene.xaxis.range == (-EXTENT, EXTENT)


def test_frame_letters_do_not_sit_on_each_other():
    fig = frame_figure(np.eye(3), steps=np.stack([np.eye(3)] * 4), overlays=[("seen", np.eye(3), None)])
    positions = [fig.data[trace_index(fig, u)].textposition
                 for u in (FRAME_UIDS["parent"], FRAME_UIDS["frame"], FRAME_UIDS["step1"], FRAME_UIDS["step2"],
                           overlay_uid(0))]
    assert len(set(positions)) == len(positions), positions


# --- plumbing: public plotly routes, traces by uid ----------------------------------------------
def test_restyle_by_uid_changes_exactly_those_traces_as_plotly_does():
    import plotly.graph_objects as go

    def build():
        return go.Figure([go.Scatter3d(x=[0, 1], y=[0, 0], z=[0, 0], uid="a", name="A"),
                          go.Mesh3d(x=[0], y=[0], z=[0], uid="b"), go.Scatter3d(x=[1], y=[1], z=[1], uid="c")])

    mine, plain = LiveFigure(build()), go.FigureWidget(build())
    assert [t.uid for t in mine.data] == ["a", "b", "c"]      # the FigureWidget's random uids are set back
    mine.restyle({"c": {"x": [7, 8], "visible": False}, "a": {"x": [5], "visible": True}})
    plain.plotly_restyle({"x": [[7, 8], [5]], "visible": [False, True]}, trace_indexes=[2, 0])
    assert [dict(t.to_plotly_json(), uid=None) for t in mine.data] == \
        [dict(t.to_plotly_json(), uid=None) for t in plain.data]
    restyle_traces(mine, {"A": {"name": "renamed"}})           # a name finds a trace too
    assert mine.trace("a").name == "renamed"
    with pytest.raises(KeyError, match="no trace"):
        mine.restyle({"zz": {"x": [1]}})
    with pytest.raises(ValueError, match="same property names"):
        mine.restyle({"a": {"x": [1]}, "c": {"y": [1]}})


def test_no_private_plotly_or_ipywidgets_api_in_the_widgets():
    import ast
    from pathlib import Path

    root = Path(pk.__file__).parent
    files = [root / "widgets" / n for n in ("controls.py", "explorer.py", "side_by_side.py", "planar.py",
                                             "trajectory_view.py")]
    files += [root / "view" / n for n in ("frames.py", "readouts.py", "sweep.py", "trajectory.py")]
    for path in files:
        for node in ast.walk(ast.parse(path.read_text())):
            if isinstance(node, ast.FunctionDef) and node.name.startswith("_perform_plotly"):
                pytest.fail(f"{path.name} overrides plotly's {node.name}")
            if isinstance(node, ast.Attribute) and node.attr.startswith("_") and not node.attr.startswith("__"):
                base = node.value
                if isinstance(base, ast.Name) and base.id == "self":
                    continue  # our own private members
                assert node.attr not in ("_data", "_layout", "_property_lock", "_holding_sync", "_send_one",
                                         "_last_trace_edit_id", "_last_layout_edit_id", "_py2js_restyle",
                                         "_py2js_update", "_set_in"), f"{path.name}: .{node.attr}"
            if isinstance(node, ast.ImportFrom) and node.module and node.module.startswith(("plotly", "ipywidgets")):
                assert not any(a.name.startswith("_") for a in node.names), f"{path.name}: {node.module}"
                assert node.module in ("plotly.graph_objects", "plotly.subplots", "plotly.offline"), node.module


def test_figure_slot_retry_shows_a_fresh_copy_and_keeps_the_uids():
    ex = Explorer(angles=(10.0, 20.0, 30.0))
    first = ex.figure
    assert ex.plot.watch.traces == len(first.data) and ex.plot.watch.status == "waiting"
    ex.plot.watch.set_state({"status": "shown"})           # the page reports a drawn plot
    assert ex.plot.ready
    ex.plot._on_msg(ex.plot.watch, {"event": "retry"}, [])  # the page's "show the plot again" button
    assert ex.figure is not first and ex.plot.attempts == 2 and not ex.plot.ready
    assert ex.plot.children == (ex.figure, ex.plot.watch)
    assert [t.uid for t in ex.figure.data] == [t.uid for t in first.data]
    assert "posekit-figure" in ex.figure._dom_classes
    ex.angles = (11.0, 20.0, 30.0)                          # updates reach the fresh figure
    want = frame_points(pk.read_rotation(ex.angles, "euler", ex.convention_value()))[0]
    assert list(_tr(ex.figure, FRAME_UIDS["frame"]).x) == want
    ex.plot._on_msg(ex.plot.watch, {"event": "something else"}, [])
    assert ex.plot.attempts == 2


def _carrying(sent, trait):
    """The messages whose state holds a (non-empty) value of ``trait``."""
    return [m for m in sent if m.get("state", {}).get(trait) is not None]


def test_one_slider_update_sends_one_plot_restyle_and_fresh_readouts():
    conv = "sequence=z-y-x unit=degrees"
    ex = Explorer(angles=(30.0, -10.0, 0.0), convention=conv)
    plot, readouts, words = _listen(ex.figure), _listen(ex.readouts), _listen(ex.words)
    for a in (31.0, 32.0, 90.0):
        plot.sent.clear(), readouts.sent.clear()
        ex.angle_rows[1].slider.set_state({"value": a})  # as the page sends a slider move
        assert ex.angles == (30.0, a, 0.0)
        restyles = _carrying(plot.sent, "_py2js_restyle")
        assert len(restyles) == 1 and len(readouts.sent) == 1   # one plotly restyle, found by uid
        assert _carrying(plot.sent, "_py2js_update") == []
        R = pk.read_rotation(ex.angles, "euler", conv)
        msg = restyles[0]["state"]["_py2js_restyle"]
        assert msg["restyle_traces"][0] == trace_index(ex.figure, FRAME_UIDS["frame"])
        sent_x = msg["restyle_data"]["x"][0]
        want_x = frame_points(R)[0]
        np.testing.assert_allclose([np.nan if v is None else v for v in sent_x],
                                   [np.nan if v is None else v for v in want_x], atol=1e-12)
        html = readouts.sent[0]["state"]["value"]
        assert html == _shown_readouts(ex)
        gauge = float(lock_gauge(R, conv).gauge)
        assert f">{format_number(gauge, 4)}</b>" in html
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
                                         q, 6) in _shown_readouts(ex)
    back = pk.write_rotation(R, "euler", new)
    assert pk.view.readouts.numbers_html(["read back 1", "2", "3"], back, 4) in _shown_readouts(ex)


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


def test_palette_change_recolours_every_frame_in_one_batched_update():
    ex = Explorer(angles=(10.0, 20.0, 30.0), palette="standard")
    plot = _listen(ex.figure)
    ex.palette = "colour-blind"
    for uid in (FRAME_UIDS["parent"], FRAME_UIDS["frame"], FRAME_UIDS["step1"], FRAME_UIDS["step2"]):
        trace = _tr(ex.figure, uid)
        assert trace.line.color[0] == PALETTES["colour-blind"][0]
        assert trace.marker.color[-1] == PALETTES["colour-blind"][2]
        assert trace.textfont.color[4] == PALETTES["colour-blind"][1]
    assert len(_carrying(plot.sent, "_py2js_update")) == 1
    ex.palette = "standard"
    assert _tr(ex.figure, FRAME_UIDS["frame"]).line.color[0] == PALETTES["standard"][0]


def test_inside_a_running_kernel_the_plot_goes_first_and_the_readouts_follow():
    import asyncio

    from posekit.widgets.explorer import READOUT_DELAY

    async def drag():
        ex = Explorer(angles=(30.0, -10.0, 0.0))
        order = []
        ex.figure.observe(lambda ch: order.append("plot") if ch["new"] else None, "_py2js_restyle")
        ex.readouts.observe(lambda ch: order.append("readouts"), "value")
        for a in (31.0, 32.0, 33.0):               # three quick slider steps
            ex.angle_rows[0].slider.set_state({"value": a})
        assert order == ["plot", "plot", "plot"]  # the numbers wait; the plot never does
        await asyncio.sleep(3 * READOUT_DELAY)
        assert order == ["plot", "plot", "plot", "readouts"]  # one readout update, for the last step
        R = pk.read_rotation((33.0, -10.0, 0.0), "euler", ex.convention_value())
        assert numbers_html(("w", "x", "y", "z"), pk.write_rotation(R, "quaternion"), 6) in _shown_readouts(ex)

    asyncio.run(drag())
