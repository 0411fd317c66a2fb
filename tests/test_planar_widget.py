"""The planar explorer: its figure and readouts come from the core, its unit switch keeps the meaning."""

from __future__ import annotations

import numpy as np
import pytest

import posekit as pk
from posekit.core.errors import PoseInputError
from posekit.view.frames import DEFAULT_PALETTE, FRAME_UIDS, PALETTES, trace_index
from posekit.widgets import PlanarExplorer


def _frame(p):
    return p.figure.data[trace_index(p.figure, FRAME_UIDS["frame"])]


def test_figure_shows_the_core_transform():
    p = PlanarExplorer(x=1.0, y=-0.5, heading=30.0)
    m = pk.make_planar(1.0, -0.5, 30.0, degrees=True)
    np.testing.assert_array_equal(p.transform(), m)
    trace = _frame(p)
    # x tip = origin + first column, y tip = origin + second column (common practice)
    assert trace.x[1] == pytest.approx(1.0 + np.cos(np.radians(30)))
    assert trace.y[4] == pytest.approx(-0.5 + np.cos(np.radians(30)))
    p.heading = 90.0
    assert _frame(p).x[1] == pytest.approx(1.0, abs=1e-12)
    # default colours, letters and units on both axes
    assert (trace.marker.color[1], trace.marker.color[4]) == PALETTES[DEFAULT_PALETTE][:2]
    assert [t for t in trace.text if t.strip()] == ["x", "y"]
    assert (p.figure.layout.xaxis.title.text, p.figure.layout.yaxis.title.text) == ("parent x (m)", "parent y (m)")


def test_unit_switch_converts_the_number_not_the_meaning():
    p = PlanarExplorer(heading=45.0)
    before = p.transform()
    p.unit_choice.value = "radians"
    assert p.heading == pytest.approx(np.pi / 4)
    np.testing.assert_allclose(p.transform(), before, atol=1e-15)
    assert p.rows["heading"].slider.step == 0.01


def test_direction_shows_the_inverse_in_the_readout():
    p = PlanarExplorer(x=2.0, heading=90.0, direction="child-from-parent")
    inv = pk.invert_transform(p.transform())
    assert "<td>2.0000</td>" in p.readouts.value and inv[1, 2] == pytest.approx(2.0)
    assert "parent \u2192 child" in p.readouts.value


def test_state_round_trip_and_bad_input():
    p = PlanarExplorer(x=0.1, y=0.2, heading=-179.5)
    assert PlanarExplorer.from_state(p.to_state()).to_state() == p.to_state()
    with pytest.raises(PoseInputError, match="unit"):
        PlanarExplorer(unit="gradians")
    with pytest.raises(PoseInputError, match="direction"):
        PlanarExplorer(direction="sideways")
    with pytest.raises(PoseInputError):
        PlanarExplorer(x=float("nan"))
