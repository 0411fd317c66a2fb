"""Frame graphs: lookups along paths, loop checks and the single-edge fix search, bad input.

Organised by law:
- path product: lookup(a, b) is the product of the edges along the path, equal to the
  composition scipy's RigidTransform computes from the same pose numbers;
- inverse: lookup(a, b) = inverse(lookup(b, a)); identity: lookup(a, a) = I;
- chaining: lookup(a, c) = lookup(a, b) lookup(b, c) in a tree;
- closure: a graph built from one set of true poses closes every loop;
- pinpointing: one injected single-edge slip is found on the right edge, and its fix
  restores the true transform;
- one engine: every loop fix is a posekit.explain Slip, its words are that slip's
  sentence, and a field the edge's convention text stated costs more than a default;
then bad input, frozen results, and the demo scenario's own claim.

Every edge's numbers are written here with scipy.spatial.transform (Rotation.as_quat,
as_euler, as_matrix and RigidTransform), not with posekit's writers, so the reading
path is checked against an independent implementation.
"""

from __future__ import annotations

import dataclasses
import itertools

import numpy as np
import pytest
from scipy.spatial.transform import RigidTransform, Rotation

from posekit import Convention, PoseInputError
from posekit.core.errors import NotUnitQuaternionError, WrongShapeError, WrongTypeError
from posekit.explain import STATED_COST, sentence
from posekit.analysis.frames_graph import (CHANGES, DisagreeingEdgeError, DisconnectedFramesError, Edge,
                                           FrameGraph, FrameGraphError, FrameNameError, LoopInTreeError,
                                           UnknownFrameError, read_planar, write_planar)
from posekit.analysis.scenarios import ROVER_BACKWARDS_EDGE, orchard_rover, orchard_rover_planar

FRAMES = ("f0", "f1", "f2", "f3", "f4", "f5", "f6")


# --- building numbers with scipy ---------------------------------------------------------

def _spatial_entry(pose: RigidTransform, style: str):
    """Numbers, kind and convention text for the canonical parent-from-child ``pose``, written by scipy.

    scipy's RigidTransform/Rotation are active and map child into parent coordinates
    (scipy.spatial.transform docs), posekit's canonical form; upper-case scipy sequences
    are intrinsic, lower-case extrinsic.
    """
    if style.startswith("backward-"):
        numbers, kind, conv = _spatial_entry(pose.inv(), style[len("backward-"):])
        return numbers, kind, (conv + " direction=child-from-parent").strip()
    t = pose.translation
    r = pose.rotation
    if style == "quat-last":      # scipy Rotation.as_quat (scalar last by default)
        return np.concatenate([t, r.as_quat()]), "position-quaternion", "scalar=last"
    if style == "quat-first":     # scipy Rotation.as_quat(scalar_first=True)
        return np.concatenate([t, r.as_quat(scalar_first=True)]), "position-quaternion", "scalar=first"
    if style == "euler-zyx-deg":  # scipy Rotation.as_euler("ZYX", degrees=True): intrinsic z-y-x
        return np.concatenate([t, r.as_euler("ZYX", degrees=True)]), "position-euler", "sequence=z-y-x unit=degrees"
    if style == "euler-xyz-ext":  # scipy Rotation.as_euler("xyz"): extrinsic x-y-z, radians
        return np.concatenate([t, r.as_euler("xyz")]), "position-euler", "sequence=x-y-z axes=extrinsic"
    if style == "euler-zxz":      # scipy Rotation.as_euler("ZXZ"): intrinsic proper Euler z-x-z
        return np.concatenate([t, r.as_euler("ZXZ")]), "position-euler", "sequence=z-x-z"
    if style == "matrix":         # scipy RigidTransform.as_matrix, a 4x4 array
        return pose.as_matrix(), "matrix", ""
    if style == "matrix-colmajor":  # the same 16 numbers flattened column by column
        return pose.as_matrix().T.reshape(-1), "matrix", "layout=column-major"
    raise AssertionError(style)


SPATIAL_STYLES = ("quat-last", "quat-first", "euler-zyx-deg", "euler-xyz-ext", "euler-zxz", "matrix",
                  "matrix-colmajor", "backward-quat-last", "backward-euler-zyx-deg", "backward-matrix")


def _random_pose(rng) -> RigidTransform:
    # scipy Rotation.random and RigidTransform.from_components build the true poses
    return RigidTransform.from_components(rng.uniform(-2, 2, 3), Rotation.random(rng=rng))


def _tree_edges(rng, n: int):
    """Random tree on ``n`` frames: (parent, child) pairs, each child attached to an earlier frame."""
    out = []
    for k in range(1, n):
        p = int(rng.integers(0, k))
        out.append((FRAMES[p], FRAMES[k]) if rng.random() < 0.5 else (FRAMES[k], FRAMES[p]))
    return out


def _spatial_graph(seed: int, n: int = 6, extra: int = 0):
    """A graph whose edges all come from one set of true placements (so every loop closes).

    Returns the graph and the true placements ``{frame: RigidTransform root-from-frame}``.
    """
    rng = np.random.default_rng(seed)
    place = {FRAMES[0]: RigidTransform.identity()}
    for k in range(1, n):
        place[FRAMES[k]] = _random_pose(rng)
    pairs = _tree_edges(rng, n)
    for _ in range(extra):
        a, b = rng.choice(n, 2, replace=False)
        pairs.append((FRAMES[a], FRAMES[b]))
    g = FrameGraph()
    for i, (p, c) in enumerate(pairs):
        pose = place[p].inv() * place[c]  # scipy RigidTransform: p-from-c = (root-from-p)^-1 (root-from-c)
        style = SPATIAL_STYLES[int(rng.integers(0, len(SPATIAL_STYLES)))]
        numbers, kind, conv = _spatial_entry(pose, style)
        g = g.with_edge(p, c, numbers, kind, conv or None, source=f"measurement {i}")
    return g, place


def _planar_pose(x, y, heading) -> RigidTransform:
    # an SE(2) pose embedded in SE(3) as a turn about z (scipy Rotation.from_euler("z", ...))
    return RigidTransform.from_components([x, y, 0.0], Rotation.from_euler("z", heading))


def _planar_of(pose: RigidTransform) -> np.ndarray:
    m = pose.as_matrix()
    out = np.eye(3)
    out[:2, :2] = m[:2, :2]
    out[:2, 2] = m[:2, 3]
    return out


def _planar_graph(seed: int, n: int = 6, extra: int = 0):
    rng = np.random.default_rng(seed)
    place = {FRAMES[0]: RigidTransform.identity()}
    for k in range(1, n):
        place[FRAMES[k]] = _planar_pose(*rng.uniform(-2, 2, 2), rng.uniform(-np.pi, np.pi))
    pairs = _tree_edges(rng, n)
    for _ in range(extra):
        a, b = rng.choice(n, 2, replace=False)
        pairs.append((FRAMES[a], FRAMES[b]))
    g = FrameGraph(planar=True)
    for i, (p, c) in enumerate(pairs):
        pose = place[p].inv() * place[c]
        m = _planar_of(pose)
        heading = float(pose.rotation.as_euler("ZYX")[0])  # scipy as_euler: the turn about z
        style = i % 4
        if style == 0:
            g = g.with_edge(p, c, [m[0, 2], m[1, 2], np.degrees(heading)], "position-heading", "unit=degrees",
                            source=f"m{i}")
        elif style == 1:
            g = g.with_edge(p, c, m, "matrix", None, source=f"m{i}")
        elif style == 2:
            g = g.with_edge(p, c, m.T.reshape(-1), "matrix", "layout=column-major", source=f"m{i}")
        else:
            inv = _planar_of(pose.inv())
            g = g.with_edge(p, c, [inv[0, 2], inv[1, 2], np.arctan2(inv[1, 0], inv[0, 0])], "position-heading",
                            "direction=child-from-parent", source=f"m{i}")
    return g, place


# --- law: path product, against scipy RigidTransform -------------------------------------

@pytest.mark.parametrize("seed", range(4))
def test_spatial_lookup_equals_scipy_rigidtransform_composition(seed):
    g, place = _spatial_graph(seed, n=7)
    for a, b in itertools.product(g.frames, repeat=2):
        # reference: scipy RigidTransform composition (root-from-a)^-1 * (root-from-b) = a-from-b
        want = (place[a].inv() * place[b]).as_matrix()
        np.testing.assert_allclose(g.lookup(a, b).matrix, want, atol=1e-9)


@pytest.mark.parametrize("seed", range(3))
def test_planar_lookup_equals_scipy_rigidtransform_composition(seed):
    g, place = _planar_graph(seed, n=7)
    for a, b in itertools.product(g.frames, repeat=2):
        want = _planar_of(place[a].inv() * place[b])  # scipy RigidTransform composition, about z only
        np.testing.assert_allclose(g.lookup(a, b).matrix, want, atol=1e-9)


@pytest.mark.parametrize("make", [_spatial_graph, _planar_graph])
def test_lookup_is_the_product_of_the_edges_along_its_path(make):
    g, _ = make(7, n=7, extra=2)
    for a, b in itertools.product(g.frames, repeat=2):
        look = g.lookup(a, b)
        prod = np.eye(look.matrix.shape[0])
        frame = a
        for s in look.steps:
            e = g.edges[s.edge]
            assert s.into_frame == frame and {s.into_frame, s.from_frame} == {e.parent, e.child}
            prod = prod @ (np.linalg.inv(e.transform) if s.inverted else e.transform)  # numpy inverse
            frame = s.from_frame
        assert frame == b and look.path == (a,) + tuple(s.from_frame for s in look.steps)
        np.testing.assert_allclose(look.matrix, prod, atol=1e-9)


# --- laws: inverse, identity, chaining -----------------------------------------------------

@pytest.mark.parametrize("make", [_spatial_graph, _planar_graph])
def test_lookup_inverse_identity_and_chaining(make):
    g, _ = make(11, n=6)
    n = 3 if g.planar else 4
    for a, b in itertools.product(g.frames, repeat=2):
        ab, ba = g.lookup(a, b).matrix, g.lookup(b, a).matrix
        np.testing.assert_allclose(ab, np.linalg.inv(ba), atol=1e-9)  # numpy inverse, independent of posekit
        if a == b:
            np.testing.assert_allclose(ab, np.eye(n), atol=1e-12)
            assert g.lookup(a, b).steps == ()
    for a, b, c in itertools.product(g.frames[:4], repeat=3):
        np.testing.assert_allclose(g.lookup(a, c).matrix, g.lookup(a, b).matrix @ g.lookup(b, c).matrix,
                                   atol=1e-9)


def test_lookup_words_and_description():
    g = (FrameGraph().with_edge("world", "base", [1, 0, 0, 1, 0, 0, 0], "position-quaternion")
         .with_edge("base", "camera", [0, 0, 0.5, 0, 0, 0], "position-euler"))
    look = g.lookup("world", "camera")
    assert look.words == "coordinates in camera -> coordinates in world"
    assert look.describe().startswith("coordinates in camera -> coordinates in world: camera -> base")
    assert g.lookup("camera", "world").words == "coordinates in world -> coordinates in camera"


def test_readout_matches_scipy_in_every_representation():
    g, place = _spatial_graph(3, n=5)
    a, b = g.frames[0], g.frames[-1]
    ref = place[a].inv() * place[b]
    r = g.lookup(a, b).readout("sequence=z-y-x unit=degrees scalar=last")
    np.testing.assert_allclose(r.matrix, ref.as_matrix(), atol=1e-9)
    q = ref.rotation.as_quat()  # scipy Rotation.as_quat, scalar last
    q = q if q[3] >= 0 else -q
    np.testing.assert_allclose(r.quaternion, q, atol=1e-9)
    np.testing.assert_allclose(r.euler, ref.rotation.as_euler("ZYX", degrees=True), atol=1e-7)  # scipy intrinsic ZYX
    np.testing.assert_allclose(r.rotation_vector, ref.rotation.as_rotvec(degrees=True), atol=1e-7)
    np.testing.assert_allclose(r.flat, ref.as_matrix().reshape(-1), atol=1e-9)
    assert r.quaternion_labels == ("x", "y", "z", "w")
    np.testing.assert_allclose(r.angle, np.degrees(ref.rotation.magnitude()), atol=1e-7)  # scipy magnitude
    back = g.lookup(a, b).readout("direction=child-from-parent")
    np.testing.assert_allclose(back.matrix, ref.inv().as_matrix(), atol=1e-9)
    assert back.words == f"coordinates in {a} -> coordinates in {b}"


def test_planar_readout_heading():
    g, place = _planar_graph(5, n=4)
    a, b = g.frames[0], g.frames[-1]
    ref = place[a].inv() * place[b]
    r = g.lookup(a, b).readout("unit=degrees")
    np.testing.assert_allclose(r.heading, ref.rotation.as_euler("ZYX", degrees=True)[0], atol=1e-7)  # scipy
    np.testing.assert_allclose(r.translation, ref.translation[:2], atol=1e-9)
    assert r.quaternion is None and r.euler is None


# --- SE(2) reading -------------------------------------------------------------------------

def test_read_planar_forms_agree_and_round_trip():
    m = read_planar([1.0, 2.0, 30.0], "position-heading", "unit=degrees")
    c, s = np.cos(np.radians(30)), np.sin(np.radians(30))
    # T = [[c, -s, x], [s, c, y], [0, 0, 1]] (common practice)
    np.testing.assert_allclose(m, [[c, -s, 1], [s, c, 2], [0, 0, 1]], atol=1e-12)
    np.testing.assert_allclose(read_planar(m.T.reshape(-1), "matrix", "layout=column-major"), m, atol=1e-12)
    np.testing.assert_allclose(read_planar(m, "matrix", "direction=child-from-parent"), np.linalg.inv(m), atol=1e-12)
    np.testing.assert_allclose(read_planar([1.0, 2.0, -30.0], "position-heading", "unit=degrees action=passive"),
                               m, atol=1e-12)
    for conv in ("unit=degrees", "direction=child-from-parent", "action=passive wrap=positive", "layout=column-major"):
        for kind in ("matrix", "position-heading"):
            back = read_planar(write_planar(m, kind, conv, flat=True), kind, conv)
            np.testing.assert_allclose(back, m, atol=1e-12)


# --- law: closure ----------------------------------------------------------------------------

@pytest.mark.parametrize("make", [_spatial_graph, _planar_graph])
def test_graph_from_true_poses_closes_every_loop(make):
    g, _ = make(21, n=7, extra=3)
    check = g.check_loops()
    assert len(check.loops) == len(g.edges) - (len(g.frames) - 1)  # a cycle basis: edges - frames + groups
    assert check.consistent and not check.fixes
    for lp in check.loops:
        assert lp.angle < 1e-9 and lp.distance < 1e-9
        assert lp.closing_edge in lp.edges


def test_bridges_are_reported_unchecked():
    g, _ = _spatial_graph(4, n=5)  # a tree: every edge is a bridge
    check = g.check_loops()
    assert check.loops == () and check.unchecked_edges == tuple(range(len(g.edges)))
    assert "no loops" in check.summary()


# --- law: pinpointing single-edge slips ---------------------------------------------------------

def _slip(pose: RigidTransform, change: str):
    """(numbers, kind, true convention, wrongly entered convention) for one slip on ``pose``."""
    t = pose.translation
    r = pose.rotation
    if change == "direction":      # child-from-parent numbers entered as parent-from-child
        inv = pose.inv()
        return np.concatenate([inv.translation, inv.rotation.as_quat()]), "position-quaternion", \
            "scalar=last direction=child-from-parent", "scalar=last"
    if change == "scalar":
        return np.concatenate([t, r.as_quat()]), "position-quaternion", "scalar=last", "scalar=first"
    if change == "algebra":        # JPL matrix = transpose of Hamilton for the same numbers (Trawny & Roumeliotis 2005)
        q = r.inv().as_quat()
        return np.concatenate([t, q]), "position-quaternion", "scalar=last algebra=jpl", "scalar=last"
    if change == "action":         # passive angles = angles of the transposed rotation (Diebel 2006)
        return np.concatenate([t, r.inv().as_euler("ZYX")]), "position-euler", "action=passive", "action=active"
    if change == "sequence":
        return np.concatenate([t, r.as_euler("xyz")]), "position-euler", "sequence=x-y-z axes=extrinsic", \
            "sequence=x-y-z axes=intrinsic"
    if change == "unit":
        return np.concatenate([t, r.as_euler("ZYX", degrees=True)]), "position-euler", "unit=degrees", \
            "unit=radians"
    raise AssertionError(change)


# A layout slip in 16 or 12 flat numbers that hold a translation is refused on entry by the
# core (the translation lands in the bottom row, or the rotation block is not orthonormal);
# it reaches a loop only for a pure rotation: see test_layout_slip_of_a_pure_rotation.
@pytest.mark.parametrize("change", ["direction", "scalar", "algebra", "action", "sequence", "unit",
                                    "rotation-transpose", "length-scale"])
@pytest.mark.parametrize("seed", [1, 2])
def test_single_convention_slip_is_pinpointed(change, seed):
    g, place = _spatial_graph(seed + 40, n=6, extra=2)
    clean = g.check_loops()
    assert clean.consistent
    on_loop = [i for i in range(len(g.edges)) if i not in clean.unchecked_edges]
    target = on_loop[seed % len(on_loop)]
    e = g.edges[target]
    truth = place[e.parent].inv() * place[e.child]  # scipy RigidTransform
    if change == "rotation-transpose":
        m = truth.as_matrix()
        m[:3, :3] = m[:3, :3].T
        numbers, kind, true_conv, wrong_conv = m, "matrix", None, None
    elif change == "length-scale":  # the translation typed in millimetres, read as metres
        numbers = np.concatenate([truth.translation * 1000.0, truth.rotation.as_quat()])
        kind, true_conv, wrong_conv = "position-quaternion", "scalar=last", "scalar=last"
    else:
        numbers, kind, true_conv, wrong_conv = _slip(truth, change)
    wrong = Edge(e.parent, e.child, numbers, kind, wrong_conv, e.source)
    bad = g.replaced(target, wrong)
    check = bad.check_loops()
    assert not check.consistent
    best = check.fixes[0]
    # JPL numbers give the transpose of the Hamilton matrix, as passive ones do: the same
    # mistake written two ways, and the engine's tie order (FAMILY_ORDER) leads with action
    lead = "action" if change == "algebra" else change
    assert best.edge == target and best.change == lead, check.summary()
    fix = next(f for f in check.fixes if f.edge == target and f.change == change)
    assert round(fix.score, 3) == round(best.score, 3) and fix.deviations == best.deviations
    assert fix.closes_all and fix.angle_after < 1e-8 and fix.distance_after < 1e-8
    np.testing.assert_allclose(best.corrected.transform, truth.as_matrix(), atol=1e-9)
    np.testing.assert_allclose(fix.corrected.transform, truth.as_matrix(), atol=1e-9)
    if change not in ("rotation-transpose", "length-scale"):
        assert fix.corrected.convention == Convention.parse(true_conv)
        assert fix.corrected.numbers == wrong.numbers  # the same numbers, read right
    assert check.suspects[0] == target
    # the fix as code rebuilds the corrected edge
    fixed = eval(best.code.split(" = ", 1)[1], {"graph": bad, "Edge": Edge})
    assert fixed.check_loops().consistent


def test_layout_slip_of_a_pure_rotation():
    # a pure rotation's 16 numbers written column by column and read row by row: the
    # transposed rotation.  For a pure rotation that is also the inverse, so flipping the
    # direction and transposing the block explain it equally well: all on the one edge.
    rng = np.random.default_rng(5)
    mount = RigidTransform.from_rotation(Rotation.random(rng=rng))  # scipy: zero translation
    c = _random_pose(rng)
    g = (FrameGraph().with_edge("a", "b", mount.as_matrix().T.reshape(-1), "matrix", "layout=row-major")
         .with_edge("b", "c", (mount.inv() * c).as_matrix(), "matrix")
         .with_edge("a", "c", np.concatenate([c.translation, c.rotation.as_quat()]), "position-quaternion",
                    "scalar=last"))
    check = g.check_loops()
    best = [f for f in check.fixes if f.score < 1e-6]
    assert {f.change for f in best} == {"direction", "layout", "rotation-transpose"}
    assert {f.edge for f in best} == {0}
    for f in best:
        np.testing.assert_allclose(f.corrected.transform, mount.as_matrix(), atol=1e-9)


@pytest.mark.parametrize("change", ["direction", "unit", "action", "rotation-transpose", "length-scale"])
def test_planar_single_slip_is_pinpointed(change):
    g, place = _planar_graph(60, n=6, extra=2)
    clean = g.check_loops()
    on_loop = [i for i in range(len(g.edges)) if i not in clean.unchecked_edges]
    target = on_loop[1]
    e = g.edges[target]
    truth = _planar_of(place[e.parent].inv() * place[e.child])
    x, y, h = truth[0, 2], truth[1, 2], np.arctan2(truth[1, 0], truth[0, 0])
    if change == "direction":
        inv = np.linalg.inv(truth)
        numbers, kind, wrong_conv = [inv[0, 2], inv[1, 2], np.arctan2(inv[1, 0], inv[0, 0])], "position-heading", None
    elif change == "unit":
        numbers, kind, wrong_conv = [x, y, np.degrees(h)], "position-heading", None
    elif change == "action":
        numbers, kind, wrong_conv = [x, y, -h], "position-heading", None
    elif change == "rotation-transpose":
        m = truth.copy()
        m[:2, :2] = m[:2, :2].T
        numbers, kind, wrong_conv = m, "matrix", None
    else:
        numbers, kind, wrong_conv = [1000 * x, 1000 * y, h], "position-heading", None
    bad = g.replaced(target, Edge(e.parent, e.child, numbers, kind, wrong_conv, e.source, planar=True))
    check = bad.check_loops()
    best = check.fixes[0]
    assert (best.edge, best.change) == (target, change), check.summary()
    np.testing.assert_allclose(best.corrected.transform, truth, atol=1e-9)


# --- law: one engine - the loop fixes are the explanation engine's slips ------------------------

def _change_of(slip) -> str:
    fam = slip.families()[0]
    return {"axes": "sequence", "transposed": "rotation-transpose", "length_scale": "length-scale"}.get(fam, fam)


@pytest.mark.parametrize("make", [orchard_rover, orchard_rover_planar])
def test_fix_words_are_the_engines_sentence_of_the_fix_slip(make):
    g = make()
    check = g.check_loops()
    assert check.fixes
    for f in check.fixes + check.partial:
        assert f.words == sentence(f.slip)
        assert f.change == _change_of(f.slip) and f.change in CHANGES
        assert f.deviations == f.slip.deviations()
        # the slip is told what the edge stated: its stated reading is the edge's own
        assert f.slip.stated.stated <= g.edges[f.edge].stated
        assert f.slip.stated.convention.direction == g.edges[f.edge].convention.direction
        # the corrected edge closes the loops the fix claims to close
        after = g.replaced(f.edge, f.corrected).check_loops()
        assert all(after.loops[k].consistent for k in f.loops_closed)
        assert after.consistent == f.closes_all
    best = check.fixes[0]
    assert best.words == "The numbers are child-from-parent (the inverse transform) but were read as " \
                         "parent-from-child."
    assert f"  edge {best.edge}: {best.words}" in check.summary()
    # ranked by loop score, then the engine's prior, then its tie order
    keys = [(round(f.score, 3), f.slip.deviations(), f.slip.order_key(), f.edge) for f in check.fixes]
    assert keys == sorted(keys)


def test_quaternion_fix_decodes_what_the_corrected_edge_reads():
    g, place = _spatial_graph(44, n=5, extra=2)
    clean = g.check_loops()
    target = next(i for i in range(len(g.edges)) if i not in clean.unchecked_edges)
    e = g.edges[target]
    truth = place[e.parent].inv() * place[e.child]  # scipy RigidTransform
    # scipy Rotation.as_quat(scalar_first=True): the numbers are (w, x, y, z); entered as scalar-last
    numbers = np.concatenate([truth.translation, truth.rotation.as_quat(scalar_first=True)])
    bad = g.replaced(target, Edge(e.parent, e.child, numbers, "position-quaternion", "algebra=hamilton"))
    for f in bad.check_loops().fixes + bad.check_loops().partial:
        if f.edge != target:
            continue
        r, t = f.slip.decode(np.asarray(bad.edges[target].numbers))
        np.testing.assert_allclose(f.corrected.transform[:3, :3], r, atol=1e-9)
        np.testing.assert_allclose(f.corrected.transform[:3, 3], t, atol=1e-9)


def _pure_rotation_loop(convention: str):
    # a pure rotation's 16 numbers written column by column: read row by row they give the
    # transpose, which for a pure rotation is also the inverse - so flipping the direction,
    # reading the other layout and transposing the block all close the loop exactly
    rng = np.random.default_rng(5)
    mount = RigidTransform.from_rotation(Rotation.random(rng=rng))  # scipy: zero translation
    c = _random_pose(rng)
    g = (FrameGraph().with_edge("a", "b", mount.as_matrix().T.reshape(-1), "matrix", convention)
         .with_edge("b", "c", (mount.inv() * c).as_matrix(), "matrix")
         .with_edge("a", "c", np.concatenate([c.translation, c.rotation.as_quat()]), "position-quaternion",
                    "scalar=last"))
    return g, mount


@pytest.mark.parametrize("convention, order", [
    # layout stated (though row-major is the default): the tie goes to the unstated direction
    ("layout=row-major", ["direction", "rotation-transpose", "layout"]),
    # direction stated: the tie goes to the unstated layout
    ("direction=parent-from-child", ["layout", "rotation-transpose", "direction"]),
])
def test_a_field_the_convention_text_stated_costs_more_than_an_unstated_one(convention, order):
    g, mount = _pure_rotation_loop(convention)
    tied = [f for f in g.check_loops().fixes if f.score < 1e-6]
    assert [f.change for f in tied] == order
    assert {f.edge for f in tied} == {0}
    stated_field = order[-1]
    assert tied[0].deviations == 1.0 and tied[-1].deviations == STATED_COST > 1.0
    assert tied[-1].words.endswith("(stated).") and "(stated)" not in tied[0].words
    for f in tied:
        assert f.words == sentence(f.slip)
        np.testing.assert_allclose(f.corrected.transform, mount.as_matrix(), atol=1e-9)  # scipy RigidTransform
    assert stated_field in g.edges[0].stated


def test_camera_quaternion_entered_scalar_last_read_scalar_first_against_scipy():
    # invented poses; scipy.spatial.transform is the outside reference for the truth
    world_base = RigidTransform.from_components([1.0, 2.0, 0.0], Rotation.from_euler("z", 30, degrees=True))
    base_camera = RigidTransform.from_components([0.3, -0.1, 0.8],
                                                 Rotation.from_euler("ZYX", [10, -25, 5], degrees=True))
    world_camera = world_base * base_camera  # scipy RigidTransform composition
    cam_numbers = np.concatenate([base_camera.translation, base_camera.rotation.as_quat()])  # scipy: (x, y, z, w)
    g = (FrameGraph()
         .with_edge("world", "base", world_base.as_matrix(), "matrix", source="localiser")
         .with_edge("base", "camera", cam_numbers, "position-quaternion", "scalar=first", source="drawing")
         .with_edge("world", "camera", world_camera.as_matrix(), "matrix", source="survey"))
    check = g.check_loops()
    assert not check.consistent
    best = check.fixes[0]
    assert (best.edge, best.change) == (1, "scalar"), check.summary()
    assert best.words == sentence(best.slip) == ("The quaternion was written scalar-last but read scalar-first "
                                                 "(stated).")
    assert best.deviations == STATED_COST  # the edge's text said scalar=first
    assert best.corrected.numbers == g.edges[1].numbers and best.corrected.convention.scalar == "last"
    # reference: scipy Rotation.from_quat reads (x, y, z, w); RigidTransform.from_components builds the 4x4
    want = RigidTransform.from_components(cam_numbers[:3], Rotation.from_quat(cam_numbers[3:])).as_matrix()
    np.testing.assert_allclose(best.corrected.transform, want, atol=1e-12)
    np.testing.assert_allclose(best.corrected.transform, base_camera.as_matrix(), atol=1e-12)
    assert g.replaced(1, best.corrected).check_loops().consistent


def test_edges_keep_the_fields_their_convention_stated():
    e = Edge("a", "b", [0, 0, 0, 1, 0, 0, 0], "position-quaternion", "scalar=first direction=parent-from-child")
    assert e.stated == {"scalar", "direction"}  # defaults, but written: stated
    assert Edge("a", "b", np.eye(4), "matrix", Convention(layout="column-major")).stated == {"layout"}
    assert Edge("a", "b", np.eye(4)).stated == frozenset()
    assert e == Edge("a", "b", [0, 0, 0, 1, 0, 0, 0], "position-quaternion")  # not part of equality
    assert e.changed(convention="algebra=jpl").stated == {"algebra"}
    assert e.flipped().stated == {"scalar", "direction"}
    assert Edge("a", "b", np.eye(4)).flipped().stated == {"direction"}
    # the code keeps what was stated, so re-entering it is charged the same way
    again = eval(e.code(), {"Edge": Edge})
    assert again == e and again.stated == e.stated
    with pytest.raises(WrongTypeError):
        Edge("a", "b", np.eye(4), stated={"colour"})


def test_two_slips_in_separate_loops_are_not_explained_by_one_edge():
    g = orchard_rover()
    # the rover's lidar edge is already backwards; flip the GNSS edge too (it is on the other loop)
    bad = g.flipped(6)
    check = bad.check_loops()
    assert not check.fixes  # no single edge closes both loops
    partly = {(f.edge, f.change) for f in check.partial}
    assert (ROVER_BACKWARDS_EDGE, "direction") in partly and (6, "direction") in partly
    assert "more than one edge" in check.summary()


# --- the edges keep what was entered --------------------------------------------------------------

def test_original_numbers_are_kept_and_flipping_inverts():
    numbers = [[1, 0, 0, 0.5], [0, 0, -1, 0], [0, 1, 0, 2], [0, 0, 0, 1]]
    g = FrameGraph().with_edge("a", "b", numbers, "matrix", "layout=row-major", source="drawing")
    e = g.edges[0]
    assert e.numbers == tuple(tuple(float(v) for v in row) for row in numbers)
    assert e.kind == "matrix" and e.source == "drawing" and e.convention.direction == "parent-from-child"
    f = g.flipped(0).edges[0]
    assert f.numbers == e.numbers and f.convention.direction == "child-from-parent"
    np.testing.assert_allclose(f.transform, np.linalg.inv(np.array(numbers, float)), atol=1e-12)
    assert g.flipped(0).flipped(0) == g
    assert e.entered_words == "coordinates in b -> coordinates in a"
    assert f.entered_words == "coordinates in a -> coordinates in b"
    h = g.with_convention(0, "direction=child-from-parent")
    assert h.edges[0] == f


# --- bad input --------------------------------------------------------------------------------------

def _small():
    return (FrameGraph().with_edge("world", "base", np.eye(4)).with_edge("base", "camera", [0, 0, 1, 0, 0, 0],
                                                                        "position-euler"))


def test_unknown_frame_lists_the_known_ones():
    g = _small()
    with pytest.raises(UnknownFrameError) as info:
        g.lookup("world", "camra")
    msg = str(info.value)
    assert "'camra'" in msg and "world, base, camera" in msg and "did you mean 'camera'" in msg
    assert isinstance(info.value, PoseInputError)
    with pytest.raises(UnknownFrameError):
        g.placement("nowhere")
    with pytest.raises(FrameNameError):
        g.lookup(3, "world")


def test_disconnected_frames():
    g = _small().with_edge("dock", "charger", np.eye(4))
    with pytest.raises(DisconnectedFramesError) as info:
        g.lookup("world", "charger")
    assert "{world, base, camera}" in str(info.value) and "{dock, charger}" in str(info.value)
    with pytest.raises(DisconnectedFramesError):
        g.tree("world")
    assert g.components() == (("world", "base", "camera"), ("dock", "charger"))
    assert g.placement("world").unreached == ("dock", "charger")


def test_duplicate_edges_that_disagree():
    g = _small()
    with pytest.raises(DisagreeingEdgeError) as info:
        g.with_edge("base", "camera", [0, 0, 1.5, 0, 0, 0], "position-euler")
    assert "different source names" in str(info.value) and "0.5" in str(info.value)
    # the same pair entered the other way round is compared as the same pose
    with pytest.raises(DisagreeingEdgeError):
        g.with_edge("camera", "base", [0, 0, 1, 0, 0, 0], "position-euler")
    same = g.with_edge("camera", "base", [0, 0, -1, 0, 0, 0], "position-euler")
    assert same is g  # agrees: kept once
    two = g.with_edge("base", "camera", [0, 0, 1.5, 0, 0, 0], "position-euler", source="calibration")
    assert len(two.edges) == 3 and not two.check_loops().consistent
    with pytest.raises(DisagreeingEdgeError):
        FrameGraph([g.edges[1], Edge("base", "camera", [0, 0, 2, 0, 0, 0], "position-euler")])


def test_cycles_where_a_tree_was_asked_for():
    g = _small().with_edge("world", "camera", [0, 0, 1, 0, 0, 0], "position-euler", source="survey")
    with pytest.raises(LoopInTreeError) as info:
        g.tree("world")
    # from world the breadth-first tree takes edges 0 and 2 first, so edge 1 is the one left over
    assert "1 edge(s) close loops: edge(s) 1 (base -> camera -> world -> base)" in str(info.value)
    tree = _small().tree("camera")
    assert tree.root == "camera" and tree.parent("base") == "camera" and tree.parent("world") == "base"
    assert tree.parent("camera") is None


def test_bad_edges_and_arguments():
    with pytest.raises(FrameNameError):
        FrameGraph().with_edge("a", "a", np.eye(4))
    with pytest.raises(FrameNameError):
        FrameGraph().with_edge("", "a", np.eye(4))
    with pytest.raises(FrameNameError):
        FrameGraph().with_edge(None, "a", np.eye(4))
    with pytest.raises(PoseInputError, match="accepted: matrix, position-heading"):
        FrameGraph(planar=True).with_edge("a", "b", [0, 0, 0, 0, 0, 0], "position-euler")
    with pytest.raises(WrongShapeError, match="all edges must agree"):
        FrameGraph([Edge("a", "b", np.eye(4)), Edge("b", "c", np.eye(3), planar=True)])
    with pytest.raises(WrongShapeError, match="exactly one"):
        FrameGraph().with_edge("a", "b", np.stack([np.eye(4)] * 2))
    with pytest.raises(NotUnitQuaternionError):
        FrameGraph().with_edge("a", "b", [0, 0, 0, 2, 0, 0, 0], "position-quaternion")
    with pytest.raises(WrongTypeError):
        FrameGraph().with_edge("a", "b", "1 0 0", "matrix")
    with pytest.raises(PoseInputError, match="edges 0..1"):
        _small().flipped(5)
    with pytest.raises(WrongTypeError):
        _small().flipped("0")
    with pytest.raises(PoseInputError, match="angle_tolerance"):
        FrameGraph(angle_tolerance=-1)
    with pytest.raises(UnknownFrameError, match="empty"):
        FrameGraph().placement()
    assert issubclass(FrameGraphError, PoseInputError)


# --- frozen results -----------------------------------------------------------------------------------

def test_results_are_frozen():
    g = orchard_rover()
    look = g.lookup("world", "lidar")
    check = g.check_loops()
    for value, name in ((look, "into_frame"), (check, "loops"), (check.loops[0], "angle"), (check.fixes[0], "edge"),
                        (g.edges[0], "numbers"), (g.placement(), "root"), (look.readout(), "words")):
        with pytest.raises(dataclasses.FrozenInstanceError):
            setattr(value, name, None)
    for arr in (look.matrix, g.edges[0].transform, check.loops[0].closure, g.placement().matrices):
        with pytest.raises(ValueError):
            arr[0, 0] = 5.0
    assert CHANGES[0] == "direction"


# --- the demo scenario's own claim (invented data: this checks the docs, not the math) ---------------

@pytest.mark.parametrize("make", [orchard_rover, orchard_rover_planar])
def test_rover_demo_points_at_its_backwards_edge(make):
    g = make()
    check = g.check_loops()
    assert check.fixes[0].edge == ROVER_BACKWARDS_EDGE and check.fixes[0].change == "direction"
    assert [lp.consistent for lp in check.loops] == [False, True]
    assert check.fixes[0].corrected == g.edges[ROVER_BACKWARDS_EDGE].flipped()
    assert g.flipped(ROVER_BACKWARDS_EDGE).check_loops().consistent


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_a_mount_entered_in_the_optical_axes_is_named_by_the_loop_check(seed):
    # the camera edge's child frame written in optical axes (x right, y down, z forward) instead of
    # FLU body axes: the numbers are T_true @ diag(Q^T, 1), Q the optical-from-FLU remap (common practice,
    # DEVELOPERS.md "Outside sources"); the loop check must name the child remap and restore the truth
    optical = np.array([[0, -1, 0], [0, 0, -1], [1, 0, 0.0]])
    g, place = _spatial_graph(seed + 60, n=6, extra=2)
    on_loop = [i for i in range(len(g.edges)) if i not in g.check_loops().unchecked_edges]
    target = on_loop[seed % len(on_loop)]
    e = g.edges[target]
    truth = place[e.parent].inv() * place[e.child]                       # scipy RigidTransform
    written = truth.as_matrix().copy()
    written[:3, :3] = written[:3, :3] @ optical.T                        # R_written = R_true Q with Q = optical^T
    bad = g.replaced(target, Edge(e.parent, e.child, written, "matrix", None, e.source))
    check = bad.check_loops()
    assert not check.consistent
    # a frame's axes are shared by every edge that touches it: the same remap on a neighbouring edge's
    # side of that frame closes the loops equally, so the target's fix must be among the exact ones
    exact = [f for f in check.fixes if f.score < 1e-6]
    ours = [f for f in exact if f.edge == target and f.change == "child-remap"]
    assert ours, check.summary()
    fix = ours[0]
    assert "child frame's axes are remapped" in fix.words and fix.words == sentence(fix.slip)
    np.testing.assert_allclose(fix.corrected.transform, truth.as_matrix(), atol=1e-9)  # scipy RigidTransform
    for f in exact:                                                      # every exact fix closes every loop
        assert f.closes_all and bad.replaced(f.edge, f.corrected).check_loops().consistent
