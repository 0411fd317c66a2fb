"""Values at every layer checked against something outside posekit.

Each check names its reference beside it:

* the paste parser: the pasted text itself (the value computed here from the literal digits with
  Python's ``float()`` and a unit factor written in this file from the SI definition:
  1 mm = 1e-3 m, 1 cm = 1e-2 m, 1 degree = pi/180 rad), rotations from scipy's ``Rotation``;
* the trajectory scanner: logs of more than 1e5 rows with events (a quaternion sign flip, a jump,
  a time gap, an Euler wrap) placed exactly at, one before and one after every internal chunk
  boundary; the truth is the events placed here, turn rates from scipy's ``Rotation``;
* the explanation engine's prior: the cost of every hypothesis against the documented formula
  (``0.5 sum (theta / sigma)^2 + 3 per deviation``, the prior ``exp(-3 k)`` written in
  posekit/explain/slips.py), residual angles from scipy, and a case on each side of the point
  where the prior outweighs the fit;
* the state loader: non-finite numbers anywhere in a state file refused with a typed error that
  names the entry; save/load round trips bit for bit (Python's float repr is the reference);
* the command line: ``--assumed`` (one pose) and ``--expected-convention`` (batch) against the
  Python API and against numbers scipy wrote under the convention the flag names;
* the explorer's "keep the orientation": the matrix kept (scipy), the angles re-written under the
  new convention (scipy), in Python, without a browser.
"""

from __future__ import annotations

import contextlib
import io
import json
import math
import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from scipy.spatial.transform import Rotation, RotationSpline

import posekit as pk
from posekit.analysis import trajectory as trajectory_module
from posekit.analysis.trajectory import check_trajectory
from posekit.io.paste import NoInterpretationError, parse_numbers

ROOT = Path(__file__).resolve().parents[1]

# --------------------------------------------------------------------------------------------------
# the paste parser: numbers against the pasted text
# --------------------------------------------------------------------------------------------------

#: metres per unit word (SI definition: the metre and its decimal submultiples)
LENGTH_FACTOR = {"mm": 1e-3, "cm": 1e-2, "m": 1.0, "metre": 1.0, "metres": 1.0, "meter": 1.0, "meters": 1.0}
#: radians per unit word (SI definition: 1 degree = pi/180 rad)
ANGLE_FACTOR = {"deg": math.pi / 180.0, "degrees": math.pi / 180.0, "°": math.pi / 180.0, "rad": 1.0,
                "radians": 1.0}
ANGLE_UNIT_NAME = {"deg": "degrees", "degrees": "degrees", "°": "degrees", "rad": "radians", "radians": "radians"}


def _literals(rng, n: int, low: float, high: float) -> list[str]:
    """Number texts as people paste them: fixed decimals, short forms, exponents, signs, leading dots."""
    out = []
    for _ in range(n):
        x = float(rng.uniform(low, high))
        style = int(rng.integers(6))
        if style == 0:
            out.append(f"{x:.3f}")
        elif style == 1:
            out.append(f"{x:.7g}")
        elif style == 2:
            out.append(f"{x:.4e}")
        elif style == 3:
            out.append(str(int(round(x))))
        elif style == 4:
            out.append(("+" if x >= 0 else "-") + f"{abs(x):.2f}")
        else:
            out.append(f"{abs(x) % 1:.4f}"[1:] if abs(x) % 1 >= 0.1 else f"{x:.5f}")  # ".5 style"
    return out


def _layouts(keys: tuple[str, ...], literals: list[str], unit: str, heading: str | None) -> list[str]:
    """One set of named values written the ways the parser takes them."""
    out = [
        "\n".join(f"{k}: {v} {unit}" for k, v in zip(keys, literals)),
        " ".join(f"{k}={v}{unit}" for k, v in zip(keys, literals)),                 # unit glued on
        ", ".join(f"{k} = {v} {unit}" for k, v in zip(keys, literals)),
    ]
    if heading:
        out.append(f"{heading}:\n" + "\n".join(f"  {k}: {v} {unit}" for k, v in zip(keys, literals)))
    return out


def _scipy_sequence(conv) -> str:
    """scipy's sequence letters: upper case intrinsic, lower case extrinsic (scipy's documentation)."""
    letters = "".join(conv.axes_letters)
    return letters.upper() if conv.intrinsic else letters.lower()


@pytest.mark.parametrize("unit", sorted(LENGTH_FACTOR))
def test_pasted_positions_are_the_digits_times_the_unit(unit):
    rng = np.random.default_rng(sum(map(ord, unit)))
    factor = LENGTH_FACTOR[unit]  # SI definition
    for _ in range(12):
        lits = _literals(rng, 3, -2500.0, 2500.0)
        want = np.array([float(v) * factor for v in lits])      # the pasted text, read by Python's float()
        texts = _layouts(("x", "y", "z"), lits, unit, "position")
        texts.append(f"position: [{', '.join(lits)}] {unit}")
        for text in texts:
            p = parse_numbers(text)
            assert p.numbers.tolist() == [float(v) for v in lits], text       # as written, before the unit
            (interp,) = p.interpretations
            assert interp.kind == "position"
            np.testing.assert_allclose(interp.translation, want, rtol=1e-15, atol=0, err_msg=text)
            np.testing.assert_allclose(interp.numbers, want, rtol=1e-15, atol=0, err_msg=text)


@pytest.mark.parametrize("unit", sorted(ANGLE_FACTOR))
def test_pasted_angles_are_the_digits_times_the_unit(unit):
    rng = np.random.default_rng(sum(map(ord, unit)) + 7)
    factor = ANGLE_FACTOR[unit]  # SI definition
    span = 170.0 if ANGLE_UNIT_NAME[unit] == "degrees" else 3.0
    for _ in range(6):
        lits = _literals(rng, 3, -span, span)
        rad = {axis: float(v) * factor for axis, v in zip("xyz", lits)}       # roll about x, pitch y, yaw z
        for text in _layouts(("roll", "pitch", "yaw"), lits, unit, "orientation"):
            interps = parse_numbers(text).interpretations
            assert interps and {i.convention.unit for i in interps} == {ANGLE_UNIT_NAME[unit]}, text
            for i in interps:
                assert i.kind == "euler"
                seq = _scipy_sequence(i.convention)
                # scipy: the same three numbers, each about the axis its name gives, in the sequence's order
                want = Rotation.from_euler(seq, [rad[a] for a in seq.lower()]).as_matrix()
                np.testing.assert_allclose(i.rotation, want, atol=1e-12, err_msg=f"{text} as {seq}")
        # a rotation vector named rx, ry, rz; scipy's from_rotvec is the reference
        text = ", ".join(f"r{a}: {v} {unit}" for a, v in zip("xyz", lits))
        interps = parse_numbers(text).interpretations
        assert {i.convention.unit for i in interps} == {ANGLE_UNIT_NAME[unit]}
        rv = [i for i in interps if i.kind == "rotation-vector"]
        assert len(rv) == 1
        np.testing.assert_allclose(rv[0].rotation, Rotation.from_rotvec([rad[a] for a in "xyz"]).as_matrix(),
                                   atol=1e-12)


def test_a_pose_with_both_units_keeps_each_to_its_own_numbers():
    rng = np.random.default_rng(5)
    for length_unit in ("mm", "cm", "m"):
        for angle_unit in ("deg", "rad"):
            pos = _literals(rng, 3, -900.0, 900.0)
            ang = _literals(rng, 3, -1.5, 1.5)
            text = ("position:\n" + "\n".join(f"  {k}: {v} {length_unit}" for k, v in zip("xyz", pos))
                    + "\norientation:\n"
                    + "\n".join(f"  {k}: {v} {angle_unit}" for k, v in zip(("roll", "pitch", "yaw"), ang)))
            interps = parse_numbers(text).interpretations
            want_t = [float(v) * LENGTH_FACTOR[length_unit] for v in pos]        # SI definition
            rad = {a: float(v) * ANGLE_FACTOR[angle_unit] for a, v in zip("xyz", ang)}
            assert interps
            for i in interps:
                assert i.kind == "position-euler" and i.convention.unit == ANGLE_UNIT_NAME[angle_unit]
                np.testing.assert_allclose(i.translation, want_t, rtol=1e-15, atol=0)
                seq = _scipy_sequence(i.convention)
                np.testing.assert_allclose(i.rotation, Rotation.from_euler(seq, [rad[a] for a in seq.lower()])
                                           .as_matrix(), atol=1e-12)                   # scipy


def test_a_unit_on_a_rotation_list_is_honoured():
    p = parse_numbers("rotation: [10, 20, 30] deg")
    assert {i.convention.unit for i in p.interpretations} == {"degrees"}
    rv = next(i for i in p.interpretations if i.kind == "rotation-vector")
    np.testing.assert_allclose(rv.rotation, Rotation.from_rotvec([10, 20, 30], degrees=True).as_matrix(),
                               atol=1e-12)                                               # scipy


@pytest.mark.parametrize("text, words", [
    ("roll: 10 mm, pitch: 2 mm, yaw: 3 mm", ["'roll'", "'mm'", "angle unit"]),
    ("x: 1 deg, y: 2 deg, z: 3 deg", ["'x'", "'deg'", "length unit"]),
    ("x: 0 mm\ny: 0 mm\nz: 0 mm\nw: 1", ["quaternion", "'mm'"]),
    ("position: [1, 2, 3] mm\nrotation: [0, 0, 0, 1] deg", ["quaternion", "'deg'"]),
    ("x: 1 mm\ny: 2 cm\nz: 3 m", ["different length units"]),
])
def test_a_unit_word_that_does_not_fit_its_number_is_refused(text, words):
    with pytest.raises(NoInterpretationError) as err:
        parse_numbers(text)
    for w in words:
        assert w in str(err.value), str(err.value)
    assert isinstance(err.value, pk.PoseInputError)


# --------------------------------------------------------------------------------------------------
# the trajectory scanner: events at its internal chunk edges, more than 1e5 rows
# --------------------------------------------------------------------------------------------------

#: the scanner's chunk length, read from its code: the events below are placed around its multiples
CHUNK = trajectory_module._CHUNK
BOUNDARIES = 8
ROWS = BOUNDARIES * CHUNK + 1001            # > 1e5 rows (131 073 with the chunk of 2**14)
DT = 0.01


def _smooth_rotations(n: int, seed: int) -> Rotation:
    """Smooth motion: scipy's RotationSpline through key orientations a few seconds apart."""
    rng = np.random.default_rng(seed)
    key_times = np.arange(0.0, n * DT + 5.0, 5.0)
    steps = Rotation.from_rotvec(rng.normal(scale=0.25, size=(key_times.size, 3)))
    keys = [Rotation.identity()]
    for s in steps[1:]:
        keys.append(keys[-1] * s)
    return RotationSpline(key_times, Rotation.concatenate(keys))(np.arange(n) * DT)


def _continuous(q: np.ndarray) -> np.ndarray:
    """Quaternions made sign-continuous row to row (q and -q are one rotation: double cover)."""
    dots = np.einsum("ij,ij->i", q[1:], q[:-1])
    signs = np.concatenate([[1.0], np.cumprod(np.where(dots < 0, -1.0, 1.0))])
    return q * signs[:, None]


def _edge_rows(used_rows: np.ndarray, boundary: int, offsets) -> list[int]:
    """Row numbers at ``boundary * CHUNK + offset`` in the order of used rows (chunks count used rows)."""
    return [int(used_rows[boundary * CHUNK + o]) for o in offsets]


def _quaternion_log(rejected: tuple[int, ...]):
    """A log with sign flips, jumps and time gaps at, one before and one after chunk boundaries."""
    used = np.ones(ROWS, dtype=bool)
    used[list(rejected)] = False
    used_rows = np.flatnonzero(used)
    flips = _edge_rows(used_rows, 1, [0]) + _edge_rows(used_rows, 2, [-1]) + _edge_rows(used_rows, 3, [1]) \
        + _edge_rows(used_rows, 4, [-1, 0, 1]) + _edge_rows(used_rows, 1, [CHUNK // 2])  # an odd count carried on
    jumps = _edge_rows(used_rows, 5, [0]) + _edge_rows(used_rows, 6, [-1]) + _edge_rows(used_rows, 7, [1])
    gaps = _edge_rows(used_rows, 8, [-1, 0, 1]) + _edge_rows(used_rows, 2, [1]) + _edge_rows(used_rows, 3, [-1])
    smooth = _smooth_rotations(ROWS, seed=11)
    # a jump: every row from the event on turned by a fixed 0.5 rad, so only the event's step is large
    rng = np.random.default_rng(12)
    turn = np.array([Rotation.identity().as_matrix()] * ROWS)
    for row in jumps:
        axis = rng.normal(size=3)
        turn[row:] = Rotation.from_rotvec(0.5 * axis / np.linalg.norm(axis)).as_matrix() @ turn[row:]
    truth = Rotation.from_matrix(turn) * smooth
    q = _continuous(truth.as_quat(scalar_first=True))                     # scipy: scalar first, posekit's default
    signs = np.ones(ROWS)
    for row in flips:
        signs[row:] *= -1.0
    stored = q * signs[:, None]
    stored[list(rejected)] = np.nan
    steps = np.full(ROWS, DT)
    steps[gaps] = 20 * DT
    times = np.cumsum(steps)
    return times, stored, q, truth, used_rows, sorted(flips), sorted(jumps), sorted(gaps)


def _scipy_rates(truth: Rotation, times: np.ndarray, used_rows: np.ndarray) -> np.ndarray:
    """Turn rate from the previous used row: scipy's geodesic angle of the relative rotation over the step."""
    prev, cur = used_rows[:-1], used_rows[1:]
    rate = np.full(times.size, np.nan)
    rate[cur] = (truth[prev].inv() * truth[cur]).magnitude() / (times[cur] - times[prev])
    return rate


@pytest.mark.parametrize("rejected", [(), (10, 20, 30, CHUNK + 3, 3 * CHUNK + 5, 5 * CHUNK + 6)],
                         ids=["every row used", "rejected rows shift the chunks"])
def test_the_scan_carries_the_previous_sample_across_every_chunk_boundary(rejected):
    times, stored, q, truth, used_rows, flips, jumps, gaps = _quaternion_log(rejected)
    assert ROWS > 100_000 and len(used_rows) > BOUNDARIES * CHUNK
    if rejected:  # a rejected row right before a chunk's first used row: its neighbour is further back
        assert used_rows[CHUNK] - 1 in rejected
    report = check_trajectory(times, stored, rate_limit=5.0)
    found = report.findings
    # the truth: the events placed above
    assert found["quaternion_sign_flips"].rows.tolist() == flips
    assert found["rate_above_limit"].rows.tolist() == jumps
    assert found["time_gaps"].rows.tolist() == gaps
    assert [r.row for r in report.rejected] == sorted(rejected)
    # the sign-continuous copy is the smooth quaternion stream itself, across every boundary
    np.testing.assert_allclose(report.quaternion[used_rows], q[used_rows], atol=1e-15)
    # turn rates from the previous used row agree with scipy on every row, the chunks' first rows included
    want = _scipy_rates(truth, times, used_rows)
    np.testing.assert_allclose(report.rate[used_rows[1:]], want[used_rows[1:]], rtol=1e-7, atol=1e-9)
    assert np.isnan(report.rate[used_rows[0]])
    edge_rows = [int(used_rows[k * CHUNK]) for k in range(1, BOUNDARIES + 1)]
    assert np.all(np.isfinite(report.rate[edge_rows]))


def test_euler_wraps_at_chunk_boundaries_are_found_and_unwrapped():
    rng = np.random.default_rng(21)
    n = ROWS
    s = np.arange(n) * DT
    # smooth angles well inside the half turn: yaw, pitch, roll (z-y-x) in degrees
    phases = rng.uniform(0, 2 * np.pi, size=(3, 2))
    amp = np.array([150.0, 60.0, 150.0])
    smooth = np.stack([amp[j] * (0.6 * np.sin(0.05 * s + phases[j, 0]) + 0.4 * np.sin(0.013 * s + phases[j, 1]))
                       for j in range(3)], axis=1)
    events = {CHUNK: 0, 2 * CHUNK - 1: 2, 3 * CHUNK + 1: 0, 4 * CHUNK - 1: 1, 4 * CHUNK: 2, 4 * CHUNK + 1: 0,
              6 * CHUNK: 1, 7 * CHUNK + 1: 2}
    stored = smooth.copy()
    for row, axis in events.items():
        stored[row:, axis] += 360.0 if rng.random() < 0.5 else -360.0          # the same rotation, a full turn on
    report = check_trajectory(s, stored, kind="euler", convention="unit=degrees")
    assert report.findings["euler_wraps"].rows.tolist() == sorted(events)
    np.testing.assert_allclose(report.euler, smooth, atol=1e-9)                 # unwrapped back to the truth
    # scipy: the stored angles and the smooth ones are one rotation (intrinsic z-y-x is scipy's "ZYX")
    a, b = Rotation.from_euler("ZYX", stored, degrees=True), Rotation.from_euler("ZYX", smooth, degrees=True)
    assert np.max((a.inv() * b).magnitude()) < 1e-9
    rate = np.degrees((b[:-1].inv() * b[1:]).magnitude()) / DT                   # scipy, degrees per time unit
    np.testing.assert_allclose(report.rate[1:], rate, rtol=1e-7, atol=1e-8)


# --------------------------------------------------------------------------------------------------
# the explanation engine: the prior weight
# --------------------------------------------------------------------------------------------------

#: The prior as documented (posekit/explain/slips.py: "prior probability exp(-PRIOR_WEIGHT k)" with
#: 3 per deviation; a field nobody stated counts 1): the cost of one unstated deviation.
DOCUMENTED_COST_PER_DEVIATION = 3.0


def _inverse_pairs(n: int, residual: float, seed: int):
    """Quaternions (scalar first) of rotations turned by ``residual / 2`` and, as expected, their inverses.

    Read as stated, each pair is off by ``residual`` (the angle between R and R^T is twice R's angle);
    read with the rotation transposed (one deviation: an unstated field) each fits exactly.
    """
    rng = np.random.default_rng(seed)
    axes = rng.normal(size=(n, 3))
    axes /= np.linalg.norm(axes, axis=1, keepdims=True)
    rots = Rotation.from_rotvec(axes * residual / 2)
    return rots.as_quat(scalar_first=True), rots.inv().as_matrix()                  # scipy


def _rank(numbers, expected, tolerance):
    from posekit.explain import Candidate, ExpectedSide, Reading, readings_of, score

    stated = Reading("quaternion")                                                    # nothing stated
    cands = [Candidate(r, numbers) for r in readings_of(stated)]
    return score(stated, cands, [ExpectedSide(expected, None, 0.0, "expected")], rotation_tolerance=tolerance,
                 translation_tolerance=1.0, keep=64, limit=5)


@pytest.mark.parametrize("fit_cost, stated_leads", [(2.5, True), (3.5, False)])
def test_the_prior_weight_decides_between_a_close_fit_as_stated_and_an_exact_fit_with_one_slip(fit_cost,
                                                                                             stated_leads):
    n, sigma = 8, math.radians(0.5)
    # n pairs each off by theta as stated: fit cost n * 0.5 (theta / sigma)^2, chosen on each side of one deviation
    theta = sigma * math.sqrt(2.0 * fit_cost / n)
    assert theta < sigma                                                        # both fit within the tolerance
    numbers, expected = _inverse_pairs(n, theta, seed=3)
    ranking = _rank(numbers, expected, sigma)
    lead, second = ranking.groups[0].lead, ranking.groups[1].lead
    as_stated = next(g.lead for g in ranking.groups if g.lead.deviations == 0)
    slipped = next(g.lead for g in ranking.groups if g.lead.deviations == 1)
    # the outside reference for the residuals: scipy's angle between what each reading decodes and the truth
    for h in (as_stated, slipped):
        got = Rotation.from_matrix(h.rotation)
        angles = (Rotation.from_matrix(expected).inv() * got).magnitude()
        np.testing.assert_allclose(h.rotation_residuals, angles, atol=1e-12)
        fit = float(np.sum(0.5 * (angles / sigma) ** 2))
        assert h.cost == pytest.approx(fit + DOCUMENTED_COST_PER_DEVIATION * h.deviations, rel=1e-9, abs=1e-9)
    assert as_stated.cost == pytest.approx(fit_cost, rel=1e-9)
    assert slipped.cost == pytest.approx(DOCUMENTED_COST_PER_DEVIATION, rel=1e-9)
    # the documented ordering: lower cost first
    if stated_leads:
        assert lead is as_stated and second is slipped
    else:
        assert lead is slipped and second is as_stated


def test_equal_fits_are_ordered_by_deviations_then_by_the_family_order():
    from posekit.explain import FAMILY_ORDER

    sigma = math.radians(0.5)
    numbers, expected = _inverse_pairs(5, math.radians(40.0), seed=4)       # far off as stated, exact when inverted
    ranking = _rank(numbers, expected, sigma)
    group = ranking.groups[0]
    members = [group.lead, *group.same, *(h for h, _ in group.separable)]
    # every member decodes the expected rotations (scipy) and fits equally
    for h in members:
        assert np.max((Rotation.from_matrix(expected).inv() * Rotation.from_matrix(h.rotation)).magnitude()) < 1e-9
    # the documented tie order: fewest deviations, then the earlier family in FAMILY_ORDER ("direction" first)
    assert group.lead.deviations == 1.0
    assert all(h.deviations >= group.lead.deviations for h in members)
    families = [h.slip.families() for h in members if h.deviations == 1.0]
    assert group.lead.slip.families() == ("direction",) == min(families, key=lambda f: FAMILY_ORDER.index(f[0]))
    assert {("action",), ("algebra",)} <= set(families)
    assert group.lead.cost == pytest.approx(DOCUMENTED_COST_PER_DEVIATION, abs=1e-9)


# --------------------------------------------------------------------------------------------------
# state files: non-finite numbers refused everywhere; round trips bit for bit
# --------------------------------------------------------------------------------------------------

def _rich_state(widget: str):
    from posekit.io.state import Edge, NamedPose, State

    rots = Rotation.random(2, random_state=8)                                         # scipy
    poses = tuple(NamedPose(f"pose {i}", pk.make_transform(r, [0.1 * i, -2.5, 1e-300]))
                  for i, r in enumerate(rots.as_matrix()))
    m = pk.make_transform(rots[0].as_matrix(), [1.0, 2.0, 3.0])
    edges = (Edge("world", "base", "matrix", tuple(m.ravel())),
             Edge("base", "arm", "matrix", tuple(m[:3].ravel())),
             Edge("arm", "hand", "position-quaternion", (0.1, 0.2, 0.3, *rots[1].as_quat(scalar_first=True))),
             Edge("hand", "tool", "position-euler", (5e-324, -0.0, 1.7976931348623157e308, 10.0, -20.0, 30.0),
                  pk.Convention.parse("unit=degrees")),
             Edge("map", "odom", "position-heading", (0.1 + 0.2, 2.2250738585072014e-308, 1.0)))
    if widget == "explorer":
        from posekit.widgets.explorer import ExplorerSettings  # noqa: F401 - registers the explorer's settings

        settings = {"angles": [30.0, -10.000000000000002, 0.1], "translation": [0.25, -1.0, 1e-17],
                    "convention": "unit=degrees", "keep": "orientation", "show_steps": True, "show_body": False,
                    "palette": "standard"}
    else:  # checked generically (as when posekit.widgets is not loaded): JSON scalars and flat lists
        settings = {"scale": 0.1 + 0.2, "limits": [-1e308, 4.9e-324, 7.0], "label": "left arm", "count": 3}
    return State(widget, settings, poses, edges, notes="seen on the bench")


@pytest.fixture(params=["generic", "explorer"])
def settings_kind(request, monkeypatch):
    """The widget kind of the state: the explorer's registered settings, or a kind checked generically."""
    if request.param == "explorer":
        return "explorer"
    from posekit.io import state as state_module

    monkeypatch.setattr(state_module, "settings_class", lambda kind: None)   # no class registered for it
    return "graph"


def _number_paths(node, path=""):
    """Every number in parsed state JSON with its path as the loader names it (``poses[0].matrix[1][2]``)."""
    if isinstance(node, bool):
        return
    if isinstance(node, (int, float)):
        yield path
    elif isinstance(node, dict):
        for k, v in node.items():
            yield from _number_paths(v, f"{path}.{k}" if path else k)
    elif isinstance(node, list):
        for i, v in enumerate(node):
            yield from _number_paths(v, f"{path}[{i}]")


def _replace_at(node, path_parts, marker):
    head, *rest = path_parts
    if not rest:
        node[head] = marker
    else:
        _replace_at(node[head], rest, marker)


def _split(path: str):
    parts = []
    for piece in path.replace("[", ".[").split("."):
        if piece:
            parts.append(int(piece[1:-1]) if piece.startswith("[") else piece)
    return parts


#: JSON number texts that name no finite float64: the non-JSON words Python's json reads, exponents
#: and digit strings beyond the largest float64 (1.7976931348623157e308, IEEE 754).
NON_FINITE = ("NaN", "Infinity", "-Infinity", "1e999", "-1E+400", "1" + "0" * 309, "-1" + "0" * 320 + ".5")


def test_the_state_loader_refuses_a_non_finite_number_anywhere_and_names_it(settings_kind):
    from posekit.io.state import StateFileError, state_from_json, state_to_json

    text = state_to_json(_rich_state(settings_kind))
    plain = json.loads(text)
    paths = list(_number_paths(plain))
    assert len(paths) > 70 and "version" in paths and any(p.startswith("settings.") for p in paths)
    for path in paths:
        for bad in NON_FINITE:
            doc = json.loads(text)
            _replace_at(doc, _split(path), "@@BAD@@")
            hostile = json.dumps(doc).replace('"@@BAD@@"', bad)
            with pytest.raises(StateFileError) as err:
                state_from_json(hostile)
            assert err.value.path == path, (path, bad, str(err.value))
            assert isinstance(err.value, pk.PoseInputError)
            # what was wrong, in the words of the JSON standard (RFC 8259 has no NaN or Infinity) or of IEEE 754
            said = ("not a JSON number",) if bad.lstrip("-")[0].isalpha() else ("beyond the range of float64",) \
                if not bad.isdigit() else ("beyond the range of float64", "an integer of about 310 digits")
            assert any(w in str(err.value) for w in said) or path == "version", (bad, str(err.value))
            assert "finite" in str(err.value) or path == "version", str(err.value)


def test_states_built_in_python_refuse_non_finite_numbers_too(monkeypatch):
    from posekit.io import state as state_module
    from posekit.io.state import Edge, NamedPose, State, StateFileError

    monkeypatch.setattr(state_module, "settings_class", lambda kind: None)   # generic settings checks

    for bad in (math.nan, math.inf, -math.inf):
        m = np.eye(4)
        m[0, 3] = bad
        with pytest.raises(StateFileError):
            NamedPose("p", m)
        with pytest.raises(StateFileError):
            Edge("a", "b", "position-heading", (0.0, bad, 1.0))
        with pytest.raises(StateFileError):
            State("graph", {"scale": bad})
        with pytest.raises(StateFileError):
            State("graph", {"limits": [1.0, bad]})


def test_state_files_round_trip_bit_for_bit(tmp_path, settings_kind):
    from posekit.io.state import load_state, save_state, state_to_json

    state = _rich_state(settings_kind)
    path = save_state(state, tmp_path / "s.json")
    back = load_state(path)
    assert back == state and state_to_json(back) == state_to_json(state)
    again = load_state(save_state(back, tmp_path / "t.json"))
    assert state_to_json(again) == state_to_json(state)
    # Python's float repr is the reference: every number reads back to the same bits, -0.0 and subnormals too
    for a, b in zip(state.edges, back.edges):
        assert [v.hex() for v in a.numbers] == [float(v).hex() for v in b.numbers]
    for a, b in zip(state.poses, back.poses):
        assert a.matrix.tobytes() == b.matrix.tobytes()
    assert math.copysign(1.0, back.edges[3].numbers[1]) == -1.0
    assert back.edges[3].numbers[0] == 5e-324 and back.edges[4].numbers[1] == 2.2250738585072014e-308
    assert dict(back.settings) == dict(state.settings)


# --------------------------------------------------------------------------------------------------
# the command line against the Python API and scipy
# --------------------------------------------------------------------------------------------------

def _cli(*args) -> tuple[int, dict]:
    from posekit.cli import main

    out = io.StringIO()
    with contextlib.redirect_stdout(out):
        code = main(list(args))
    return code, json.loads(out.getvalue())


def _numbers_text(values) -> str:
    return " ".join(repr(float(v)) for v in np.ravel(values))


def same_rotation_quaternion(got, want, atol=1e-9) -> bool:
    """Component by component, signs included, up to one overall sign (q ~ -q: double cover)."""
    got, want = np.asarray(got, float), np.asarray(want, float)
    return bool(np.allclose(got, want, atol=atol) or np.allclose(got, -want, atol=atol))


#: scipy: the rotation the expected angles name under posekit's default z-y-x intrinsic ("ZYX")
EXPECTED_ANGLES = (40.0, -15.0, 8.0)
TRUTH = Rotation.from_euler("ZYX", EXPECTED_ANGLES, degrees=True)

#: (observed numbers written by scipy, the posekit convention and kind naming how they were written)
SINGLE_CASES = {
    "quaternion scalar last": (TRUTH.as_quat(), "scalar=last", None),
    "euler x-y-z extrinsic degrees": (TRUTH.as_euler("xyz", degrees=True),
                                      "sequence=x-y-z axes=extrinsic unit=degrees", None),
    "euler z-x-z intrinsic radians": (TRUTH.as_euler("ZXZ"), "sequence=z-x-z unit=radians", None),
    "matrix column-major": (TRUTH.as_matrix().T, "layout=column-major", None),
    "rotation vector radians": (TRUTH.as_rotvec(), "unit=radians", "rotation-vector"),
    "inverse quaternion": (TRUTH.inv().as_quat(scalar_first=True), "direction=child-from-parent", None),
}


def test_the_quaternion_check_is_not_fooled_by_the_inverse_rotation():
    q = TRUTH.as_quat(scalar_first=True)
    conjugate = q * np.array([1.0, -1.0, -1.0, -1.0])                   # the inverse rotation (scipy: inv())
    assert same_rotation_quaternion(-q, q)
    assert not same_rotation_quaternion(conjugate, q)
    assert np.any(q < 0) and not same_rotation_quaternion(np.abs(q), q)   # absolute values are not enough


@pytest.mark.parametrize("case", sorted(SINGLE_CASES))
def test_cli_assumed_reads_the_observed_numbers_as_scipy_wrote_them(case):
    from posekit.analysis.diagnose import diagnose

    numbers, assumed, kind = SINGLE_CASES[case]
    observed = _numbers_text(numbers)
    base = ["diagnose", "--expected", " ".join(map(str, EXPECTED_ANGLES)), "--expected-convention", "unit=degrees",
            "--observed", observed, "--json"]
    extra = ["--assumed", assumed] + (["--assumed-kind", kind] if kind else [])
    code, data = _cli(*base, *extra)
    assert code == 0
    best = data["explanations"][0]
    # read the way scipy wrote them, the numbers are the expected pose: no slip, scipy's matrix
    assert best["deviations"] == 0 and best["rotation_residual_degrees"] < 1e-6, best["sentence"]
    np.testing.assert_allclose(best["corrected_rotation"], TRUTH.as_matrix(), atol=1e-9)   # scipy
    if kind is None and np.size(numbers) == 4:
        assert same_rotation_quaternion(best["corrected_numbers"], numbers)             # scipy's own numbers
    else:
        np.testing.assert_allclose(best["corrected_numbers"], np.ravel(numbers), atol=1e-9)
    # the Python API with the same settings gives the same answer
    api = diagnose(" ".join(map(str, EXPECTED_ANGLES)), observed, assumed=assumed, assumed_kind=kind,
                   expected_convention="unit=degrees").as_dict()
    assert data["assumed"] == api["assumed"] and assumed.split()[0] in data["assumed"]
    assert [e["sentence"] for e in data["explanations"]] == [e["sentence"] for e in api["explanations"]]
    np.testing.assert_allclose(best["corrected_numbers"], api["explanations"][0]["corrected_numbers"], atol=1e-12)
    # without the flag the same numbers are read under the expected side's convention: a slip is named
    code, plain = _cli(*base, *(["--assumed-kind", kind] if kind else []))
    assert plain["explanations"][0]["deviations"] > 0
    assert plain["assumed"] != data["assumed"]


#: expected poses written by scipy under a convention: (scipy writer, posekit convention text)
BATCH_CASES = {
    "euler x-y-z extrinsic degrees": (lambda r: r.as_euler("xyz", degrees=True),
                                      "sequence=x-y-z axes=extrinsic unit=degrees"),
    "euler z-x-z intrinsic radians": (lambda r: r.as_euler("ZXZ"), "sequence=z-x-z unit=radians"),
    "quaternion scalar last": (lambda r: r.as_quat(), "scalar=last"),
    "matrix column-major": (lambda r: np.swapaxes(r.as_matrix(), 1, 2).reshape(-1, 9), "layout=column-major"),
}


@pytest.mark.parametrize("case", sorted(BATCH_CASES))
def test_cli_expected_convention_reads_the_batch_as_scipy_wrote_it(tmp_path, case):
    from posekit.analysis.diagnose import diagnose_batch, expected_rows

    write, conv = BATCH_CASES[case]
    rots = Rotation.random(10, random_state=sum(map(ord, case)))                  # scipy
    expected = np.asarray(write(rots))
    observed = rots.as_quat(scalar_first=True)                                   # scipy: scalar first
    exp_file, obs_file = tmp_path / "expected.txt", tmp_path / "observed.txt"
    exp_file.write_text("\n".join(_numbers_text(r) for r in expected))
    obs_file.write_text("\n".join(_numbers_text(q) for q in observed))
    # the observed side stated on its own (it defaults to the expected side's convention)
    base = ["diagnose", "--expected-file", str(exp_file), "--observed-file", str(obs_file), "--assumed",
            "scalar=first", "--json"]
    code, data = _cli(*base, "--expected-convention", conv)
    assert code == 0
    best = data["explanations"][0]
    assert best["deviations"] == 0 and max(data["rotation_residuals_degrees"]) < 1e-6, best["sentence"]
    for got, want in zip(best["corrected_numbers"], observed):
        assert same_rotation_quaternion(got, want)                                # scipy's quaternions
    # the Python API with the same settings
    api = diagnose_batch(expected_rows(expected, None, conv), observed, assumed="scalar=first",
                         expected_convention=conv).as_dict()
    assert [e["sentence"] for e in data["explanations"]] == [e["sentence"] for e in api["explanations"]]
    np.testing.assert_allclose(data["rotation_residuals_degrees"], api["rotation_residuals_degrees"], atol=1e-9)
    # without the flag the expected numbers are read under the default convention: not the same answer
    _, plain = _cli(*base)
    assert plain["explanations"][0]["sentence"] != best["sentence"] or \
        max(plain["rotation_residuals_degrees"]) > 1e-3


@pytest.mark.parametrize("case", ["euler x-y-z extrinsic degrees", "euler z-x-z intrinsic radians"])
def test_cli_batch_observed_side_borrows_the_expected_convention(tmp_path, case):
    from posekit.analysis.diagnose import diagnose_batch, expected_rows

    write, conv = BATCH_CASES[case]
    rots = Rotation.random(6, random_state=len(case))                             # scipy
    angles = np.asarray(write(rots))
    lines = "\n".join(_numbers_text(r) for r in angles)
    exp_file, obs_file = tmp_path / "expected.txt", tmp_path / "observed.txt"
    exp_file.write_text(lines)
    obs_file.write_text(lines)                        # logged by the same code that wrote the expected angles
    code, data = _cli("diagnose", "--expected-file", str(exp_file), "--observed-file", str(obs_file),
                      "--expected-convention", conv, "--json")
    assert code == 0
    best = data["explanations"][0]
    assert best["deviations"] == 0 and max(data["rotation_residuals_degrees"]) < 1e-6, best["sentence"]
    # no --assumed: the observed numbers are read under the expected side's convention
    read_as, given = pk.Convention.parse(data["stated_reading"]["convention"]), pk.Convention.parse(conv)
    assert (read_as.sequence, read_as.axes, read_as.unit) == (given.sequence, given.axes, given.unit)
    assert "the expected side's convention was used" in data["assumed_reading"]
    for got, want in zip(best["corrected_rotation"], rots.as_matrix()):
        np.testing.assert_allclose(got, want, atol=1e-9)                                   # scipy
    api = diagnose_batch(expected_rows(angles, None, conv), angles, expected_convention=conv).as_dict()
    assert data["stated_reading"] == api["stated_reading"]
    assert [e["sentence"] for e in data["explanations"]] == [e["sentence"] for e in api["explanations"]]


def test_the_cli_as_a_user_runs_it_agrees_with_scipy():
    env = dict(os.environ, PYTHONPATH=str(ROOT) + os.pathsep + os.environ.get("PYTHONPATH", ""))
    numbers, assumed, _ = SINGLE_CASES["quaternion scalar last"]
    proc = subprocess.run([sys.executable, "-m", "posekit.cli", "diagnose", "--expected", "40 -15 8",
                           "--expected-convention", "unit=degrees", "--observed", _numbers_text(numbers),
                           "--assumed", assumed, "--json"], capture_output=True, text=True, env=env, cwd=ROOT,
                          timeout=120)
    assert proc.returncode == 0, proc.stderr
    best = json.loads(proc.stdout)["explanations"][0]
    assert best["deviations"] == 0
    np.testing.assert_allclose(best["corrected_rotation"], TRUTH.as_matrix(), atol=1e-9)    # scipy
    assert same_rotation_quaternion(best["corrected_numbers"], TRUTH.as_quat())            # scipy: scalar last


# --------------------------------------------------------------------------------------------------
# the explorer: "keep the orientation" re-writes the angles, in Python
# --------------------------------------------------------------------------------------------------

START = (30.0, -20.0, 50.0)


def _scipy_angles(matrix, conv) -> np.ndarray:
    """The angles scipy writes for ``matrix`` read under ``conv`` (active, parent-from-child unless stated)."""
    m = matrix if (conv.action == "active") == (conv.direction == "parent-from-child") else matrix.T
    return Rotation.from_matrix(m).as_euler(_scipy_sequence(conv), degrees=conv.degrees)


@pytest.mark.parametrize("field, value", [("sequence", "x-y-z"), ("sequence", "z-x-z"), ("axes", "extrinsic"),
                                          ("unit", "radians"), ("action", "passive"),
                                          ("direction", "child-from-parent")])
def test_explorer_keeping_the_orientation_rewrites_the_angles(field, value):
    from posekit.widgets import Explorer

    ex = Explorer(angles=START, convention="sequence=z-y-x unit=degrees", keep="orientation")
    truth = Rotation.from_euler("ZYX", START, degrees=True).as_matrix()                 # scipy
    np.testing.assert_allclose(ex.rotation(), truth, atol=1e-12)
    ex.bar.controls[field].value = value                                              # as a click does
    conv = ex.convention_value()
    assert getattr(conv, field) == value
    np.testing.assert_allclose(ex.rotation(), truth, atol=1e-12)                       # the orientation kept
    np.testing.assert_allclose(ex.to_pose().rotation, truth, atol=1e-12)
    np.testing.assert_allclose(ex.angles, _scipy_angles(truth, conv), atol=1e-9)      # re-written (scipy)
    assert max(abs(a - b) for a, b in zip(ex.angles, START)) > 1e-3                    # not the old numbers
    assert [r.box.number for r in ex.angle_rows] == list(ex.angles)                    # the controls show them


def test_explorer_keeping_the_numbers_gives_them_the_new_meaning():
    from posekit.widgets import Explorer

    ex = Explorer(angles=START, convention="sequence=z-y-x unit=degrees", keep="numbers")
    ex.bar.controls["sequence"].value = "x-y-z"
    assert tuple(ex.angles) == START
    np.testing.assert_allclose(ex.rotation(), Rotation.from_euler("XYZ", START, degrees=True).as_matrix(),
                               atol=1e-12)                                              # scipy
