"""The one scorer (posekit.explain.scorer) against a slow oracle written apart from it.

The scorer finds its best hypotheses from closed-form sums: one cross-covariance per
reading, a lower bound per cell, a chordal stand-in for the angle.  The oracle here
enumerates the same hypotheses one at a time, as the module's docstring defines them --
every candidate reading x the four relations x parent remap x child remap (x length scale
x translation frame when both sides hold a translation) x every reading of the expected
side -- decodes each with ``Slip.decode`` and measures it:

* the residual angle of each pair with scipy: ``Rotation.from_matrix(E.T @ D).magnitude()``;
* the residual length of each pair with numpy;
* cost = sum 0.5 (angle / sigma_r)^2 + sum 0.5 (length / sigma_t)^2 + PRIOR_WEIGHT * deviations,
  where deviations are the slip's own count plus the expected reading's.

Laws checked over a grid of kinds, stated fields and slips: every hypothesis listed
carries the oracle's pose, residuals, cost and candidate; with every hypothesis kept, the
groups are the oracle's classes of equal decoded pose, in cost order with the fitting ones
first; with a short list, only hypotheses among the ``keep`` best by the chordal cost are
listed.  Also: the bounded search against a full sort, and score's refusals word for word.

Poses and numbers come from scipy.spatial.transform.Rotation (named beside each use).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.spatial.transform import Rotation

from posekit.core.errors import (BadCountError, BadToleranceError, CountTypeError, ToleranceTypeError,
                                 WrongShapeError, WrongTypeError)
from posekit.explain import Candidate, ExpectedSide, Slip, readings_of, score, stated_reading
from posekit.explain import scorer
from posekit.explain.slips import LENGTH_SCALES, PRIOR_WEIGHT, TRANSLATION_FRAMES

SIGMA_T = 0.01


# --- the oracle ------------------------------------------------------------------------------------------------
def _relations(stated, reading):
    """The four relations as the module's docstring names them: (true reading, block transposed)."""
    c = stated.convention
    flip_dir = "child-from-parent" if c.direction == "parent-from-child" else "parent-from-child"
    if reading.parameterised:
        flip_act = "passive" if c.action == "active" else "active"
        pairs = [(c.action, c.direction, False), (flip_act, c.direction, False),
                 (c.action, flip_dir, False), (flip_act, flip_dir, False)]
    else:
        pairs = [(c.action, c.direction, False), (c.action, c.direction, True),
                 (c.action, flip_dir, False), (c.action, flip_dir, True)]
    return [(reading.with_fields(action=a, direction=d), t) for a, d, t in pairs]


def _angles(e, d):
    """Residual angle per pair, by scipy (both sides proper); NaN where a decode is no rotation (a wrong
    layout of a transform puts translation numbers in the block): no outside angle exists for it."""
    rel = (np.swapaxes(e, -1, -2) @ d).reshape(-1, 3, 3)
    rotation = np.max(np.abs(np.swapaxes(rel, -1, -2) @ rel - np.eye(3)), axis=(-1, -2)) < 1e-9
    out = np.full(len(rel), np.nan)
    if np.any(rotation):
        out[rotation] = Rotation.from_matrix(rel[rotation]).magnitude()         # scipy: Rotation.magnitude
    return out.reshape(np.shape(d)[:-2])


def _scored(decoded, p, q):
    """Only hypotheses that decode to a proper rotation are scored: more pairs decode proper than mirrored,
    and at a tie the proper pairs are taken at their word (both remaps proper, or both mirrors)."""
    votes = np.sum(np.sign(np.linalg.det(decoded)))
    return votes > 0 or (votes == 0 and (p >= 24) == (q >= 24))


def oracle(stated, candidates, expected, sigma_r, sigma_t=SIGMA_T, reflections=True):
    """Every hypothesis, one at a time: a dict keyed by (slip, expected index), and how many were enumerated."""
    n_remap = 48 if reflections else 24
    compare_t = candidates[0].reading.has_translation and all(e.translation is not None for e in expected)
    extras = [(s, f) for s in LENGTH_SCALES for f in TRANSLATION_FRAMES] if compare_t else [(1.0, "parent")]
    slips, rots, trans, before, owner, enumerated = [], [], [], [], [], 0
    for k, cand in enumerate(candidates):
        for true, transposed in _relations(stated, cand.reading):
            for p in range(n_remap):
                for q in range(n_remap):
                    for s, f in extras:
                        enumerated += len(expected)
                        slip = Slip(stated, true, transposed, p, q, s, f)
                        r, t = slip.decode(cand.numbers)
                        if not _scored(r, p, q):
                            continue
                        slips.append(slip)
                        rots.append(r)
                        trans.append(t)
                        # the translation before the frame step (what the short list's stand-in compares)
                        before.append(t if f == "parent" or t is None else
                                      Slip(stated, true, transposed, p, q, s, "parent").decode(cand.numbers)[1])
                        owner.append(k)
    rots = np.stack(rots)                                                       # (M, N, 3, 3)
    out = {}
    for e_i, e in enumerate(expected):
        ang = _angles(np.broadcast_to(e.rotation, rots.shape), rots)           # (M, N)
        chord = np.sum((e.rotation - rots) ** 2, axis=(-1, -2))
        fit = np.sum(0.5 * (ang / sigma_r) ** 2, axis=-1)
        chordal = np.sum(0.25 * chord / sigma_r ** 2, axis=-1)
        tres = None
        if compare_t:
            tres = np.linalg.norm(np.stack(trans) - e.translation, axis=-1)
            fit = fit + np.sum(0.5 * (tres / sigma_t) ** 2, axis=-1)
            # the short list's stand-in: the translation before the frame step against the expected one
            # carried into that frame by the *expected* rotation (the module docstring's closed form)
            local = np.einsum("nba,nb->na", e.rotation, e.translation)               # R^T t
            target = {"parent": e.translation, "child-axes": local, "inverse-translation": -local}
            stand_in = np.stack([np.linalg.norm(b - target[sl.translation_frame], axis=-1)
                                 for b, sl in zip(before, slips)])
            chordal = chordal + np.sum(0.5 * (stand_in / sigma_t) ** 2, axis=-1)
        for j, slip in enumerate(slips):
            dev = slip.deviations() + e.deviations
            out[slip, e_i] = dict(rotation=rots[j], translation=trans[j], angles=ang[j],
                                  tres=None if tres is None else tres[j], cost=fit[j] + PRIOR_WEIGHT * dev,
                                  chordal=chordal[j] + PRIOR_WEIGHT * dev, deviations=dev, candidate=owner[j],
                                  expected=e_i)
    return out, enumerated


def _listed(ranking):
    for g in ranking.groups:
        yield g, g.lead
        for h in g.same:
            yield g, h
        for h, _ in g.separable:
            yield g, h


def _classes(table, sigma_r, sigma_t):
    """The oracle's classes of hypotheses that decode to the same pose (rotation and any translation) against
    the same expected reading,
    each as (lowest cost, fits within the tolerances); in cost order, the fitting ones first."""
    reps: list = []
    keys = np.zeros((0, 0))
    for h in sorted((v for v in table.values() if np.isfinite(v["cost"])), key=lambda v: v["cost"]):
        # a decoded translation is part of the pose even when the expected side has none to compare
        key = np.concatenate([[h["expected"] * 10.0], h["rotation"].ravel(),
                              [] if h["translation"] is None else h["translation"].ravel()])
        if len(reps) and np.min(np.max(np.abs(keys - key), axis=1)) <= 1e-7:
            continue
        reps.append(h)
        keys = key[None] if not len(keys) else np.vstack([keys, key])
    fits = [bool(math.sqrt(np.mean(h["angles"] ** 2)) <= sigma_r
                 and (h["tres"] is None or math.sqrt(np.mean(h["tres"] ** 2)) <= sigma_t)) for h in reps]
    order = [i for i in range(len(reps)) if fits[i]] + [i for i in range(len(reps)) if not fits[i]]
    return [(reps[i]["cost"], fits[i]) for i in order]


def _check_listed(ranking, table, sigma_r, candidates):
    """Every hypothesis listed carries the oracle's pose, residuals, cost, deviations and candidate."""
    seen = 0
    for g, h in _listed(ranking):
        o = table[h.slip, h.expected]
        assert h.expected == g.lead.expected, "a group speaks for one reading of the expected side"
        np.testing.assert_allclose(h.rotation, o["rotation"], atol=1e-12)
        np.testing.assert_allclose(h.rotation_residuals, o["angles"], atol=1e-9)
        np.testing.assert_allclose(h.rotation, g.lead.rotation, atol=1e-9)           # same pose on every pair
        if o["tres"] is None:
            assert h.translation_residuals is None
        else:
            np.testing.assert_allclose(h.translation, o["translation"], atol=1e-12)
            np.testing.assert_allclose(h.translation_residuals, o["tres"], atol=1e-9)
            np.testing.assert_allclose(h.translation, g.lead.translation, atol=1e-9)
        assert h.cost == pytest.approx(o["cost"], rel=1e-9, abs=1e-9)
        assert h.deviations == o["deviations"]
        assert h.candidate == o["candidate"]
        assert candidates[h.candidate].reading == h.slip.true.with_fields(
            action=candidates[h.candidate].reading.convention.action,
            direction=candidates[h.candidate].reading.convention.direction)
        assert h.rotation_rms == pytest.approx(math.sqrt(np.mean(o["angles"] ** 2)), abs=1e-12)
        seen += 1
    assert seen >= 1


# --- cases: numbers written by scipy under a true reading, read under a stated one ------------------------------
def _poses(seed, n):
    return Rotation.random(n, random_state=seed)                              # scipy: Rotation.random


def _case(name, seed, n=3):
    """(stated reading, numbers (N, count), truth rotations (N, 3, 3), truth translations or None)."""
    rot = _poses(seed, n)
    rng = np.random.default_rng(seed)
    t = rng.normal(size=(n, 3))
    if name == "quaternion-stated-passive-really-active":
        return stated_reading(4, None, "scalar=last action=passive"), rot.as_quat(), rot.as_matrix(), None  # scipy: x y z w
    if name == "quaternion-scalar-first-really-last":
        return stated_reading(4), rot.as_quat(), rot.as_matrix(), None             # scipy: scalar last
    if name == "quaternion-direction-stated-inverse":
        return (stated_reading(4, None, "direction=child-from-parent"), rot.as_quat(scalar_first=True),
                rot.inv().as_matrix(), None)                                    # scipy: Rotation.inv
    if name == "euler-degrees-really-radians":
        return (stated_reading(3, "euler", "unit=degrees"), rot.as_euler("ZYX"), rot.as_matrix(), None)  # scipy: intrinsic z-y-x
    if name == "euler-extrinsic-read-intrinsic":
        return (stated_reading(3, "euler", "unit=degrees"), rot.as_euler("zyx", degrees=True), rot.as_matrix(),
                None)                                                           # scipy: lower case = extrinsic
    if name == "matrix-column-major":
        return stated_reading(9), rot.as_matrix().transpose(0, 2, 1).reshape(n, 9), rot.as_matrix(), None
    if name == "matrix-stated-child-from-parent":
        return (stated_reading(9, None, "direction=child-from-parent"), rot.as_matrix().reshape(n, 9),
                rot.inv().as_matrix(), None)
    if name == "rotation-vector-degrees":
        return (stated_reading(3, "rotation-vector"), rot.as_rotvec(degrees=True), rot.as_matrix(), None)  # scipy
    if name == "position-quaternion-position-last":
        return (stated_reading(7, None, "scalar=last"), np.hstack([rot.as_quat(), t]), rot.as_matrix(), t)
    if name == "position-euler-millimetres":
        return (stated_reading(6, "position-euler", "unit=degrees"),
                np.hstack([t * 1e3, rot.as_euler("ZYX", degrees=True)]), rot.as_matrix(), t)   # scipy
    if name == "transform-inverse-translation":
        m = np.concatenate([rot.as_matrix(), -np.swapaxes(rot.as_matrix(), 1, 2) @ t[:, :, None]], axis=2).reshape(n, 12)
        return stated_reading(12), m, rot.as_matrix(), t
    if name == "transform-column-major-rotation-only":
        m = np.concatenate([rot.as_matrix(), 5.0 * t[:, :, None]], axis=2)       # (N, 3, 4), translations of metres
        return stated_reading(12), np.swapaxes(m, 1, 2).reshape(n, 12), rot.as_matrix(), None
    raise KeyError(name)


ROTATION_CASES = ["quaternion-stated-passive-really-active", "quaternion-scalar-first-really-last",
                  "quaternion-direction-stated-inverse", "euler-degrees-really-radians", "euler-extrinsic-read-intrinsic",
                  "matrix-column-major", "matrix-stated-child-from-parent", "rotation-vector-degrees",
                  "transform-column-major-rotation-only"]
TRANSLATION_CASES = ["position-quaternion-position-last", "position-euler-millimetres",
                     "transform-inverse-translation"]


def _true_candidates(stated, numbers, truth, want=2):
    """The readings that decode the numbers closest to the truth (``want`` of them), the stated one first when
    ``want`` > 1."""
    readings = readings_of(stated)
    best = []
    for r in readings:
        err = min(np.max(np.abs(Slip(stated, tr, tp).decode(numbers)[0] - truth)) for tr, tp in _relations(stated, r))
        best.append((err, readings.index(r)))
    ranked = [i for _, i in sorted(best)]
    chosen = ranked[:1] if want == 1 else [0] + [i for i in ranked if i != 0][:want - 1]
    return [Candidate(readings[i], numbers) for i in chosen]


@pytest.mark.parametrize("name", ROTATION_CASES)
def test_with_every_hypothesis_kept_the_groups_are_the_oracles_classes(name):
    stated, numbers, truth, _ = _case(name, seed=7)
    cands = _true_candidates(stated, numbers, truth, want=1)
    noisy = (Rotation.from_rotvec(np.random.default_rng(3).normal(scale=0.004, size=(len(truth), 3)))
             * Rotation.from_matrix(truth)).as_matrix()                          # scipy: a turn of about 0.4 degrees
    expected = [ExpectedSide(noisy, None, 0.0, "as given")]
    sigma = math.radians(1.0)
    table, enumerated = oracle(stated, cands, expected, sigma, reflections=False)
    everything = len(cands) * 4 * 24 * 24
    ranking = score(stated, cands, expected, rotation_tolerance=sigma, translation_tolerance=SIGMA_T,
                    reflections=False, keep=everything, limit=8)
    assert ranking.hypotheses_scored == enumerated == everything
    assert ranking.stated is stated and ranking.pairs == len(truth) and ranking.compared_translation is False
    _check_listed(ranking, table, sigma, cands)
    want = _classes(table, sigma, SIGMA_T)[:8]
    assert len(ranking.groups) == len(want) == 8
    got = [g.lead.cost for g in ranking.groups]
    np.testing.assert_allclose(got, [c for c, _ in want], rtol=1e-9, atol=1e-9)
    # the lead is the cheapest member: the fewest deviations, since members share their fit
    for g in ranking.groups:
        assert all(h.deviations >= g.lead.deviations for h in g.same)
        assert all(h.deviations >= g.lead.deviations for h, _ in g.separable)
        assert all(h.deviations <= g.lead.deviations + 1 for h in g.same)
        assert all(h.deviations <= g.lead.deviations + 1 for h, _ in g.separable)
    assert ranking.groups[0].lead.rotation_rms <= sigma                          # the slip that wrote the numbers


@pytest.mark.parametrize("name,degrees", [(n, d) for n in ROTATION_CASES for d in (1.0, 40.0)]
                         + [(n, 40.0) for n in TRANSLATION_CASES])
def test_a_short_list_holds_only_the_best_by_chordal_cost(name, degrees):
    stated, numbers, truth, t_truth = _case(name, seed=11, n=2)
    small = t_truth is not None          # translations: 24 x 24 remaps, one reading, one expected side (time)
    cands = _true_candidates(stated, numbers, truth, want=1 if small else 2)
    # noise of about 2 degrees: on a 1-degree tolerance the fit decides most of the order, on a 40-degree
    # one the prior weighs as much as the fit of a wrong remap
    noisy = (Rotation.from_rotvec(np.random.default_rng(5).normal(scale=0.03, size=(len(truth), 3)))
             * Rotation.from_matrix(truth)).as_matrix()                          # scipy
    expected = [ExpectedSide(noisy, t_truth, 0.0, "as given")]
    if not small:
        expected.append(ExpectedSide(np.swapaxes(noisy, -1, -2), None, 1.0, "transposed"))
    sigma, sigma_t = math.radians(degrees), SIGMA_T * degrees * 20
    table, enumerated = oracle(stated, cands, expected, sigma, sigma_t, reflections=not small)
    keep = 40
    ranking = score(stated, cands, expected, rotation_tolerance=sigma, translation_tolerance=sigma_t,
                    reflections=not small, keep=keep, limit=50)
    assert ranking.hypotheses_scored == enumerated == (
        len(cands) * 4 * 24 * 24 * 9 if small else 2 * len(cands) * 4 * 48 * 48)
    _check_listed(ranking, table, sigma, cands)
    chordal = np.sort([v["chordal"] for v in table.values()])
    bound = chordal[keep - 1]
    listed = [table[h.slip, h.expected]["chordal"] for _, h in _listed(ranking)]
    assert max(listed) <= bound + 1e-9 * max(1.0, bound), "a hypothesis outside the short list was listed"
    assert min(listed) == pytest.approx(chordal[0], rel=1e-9)                   # the best by chordal cost is there
    # the first explanation is the cheapest of those listed that fit, when any fits
    fitting = [table[h.slip, h.expected] for _, h in _listed(ranking)]
    fitting = [v["cost"] for v in fitting if math.sqrt(np.mean(v["angles"] ** 2)) <= sigma and (
        v["tres"] is None or math.sqrt(np.mean(v["tres"] ** 2)) <= sigma_t)]
    if fitting:
        assert ranking.groups[0].lead.cost == pytest.approx(min(fitting), rel=1e-9)


@pytest.mark.parametrize("name", TRANSLATION_CASES)
def test_with_translations_every_listed_hypothesis_is_the_oracles(name):
    stated, numbers, truth, t_truth = _case(name, seed=13, n=2)
    cands = _true_candidates(stated, numbers, truth, want=1)
    expected = [ExpectedSide(truth, t_truth, 0.0, "as given")]
    sigma = math.radians(0.5)
    table, enumerated = oracle(stated, cands, expected, sigma, reflections=False)
    ranking = score(stated, cands, expected, rotation_tolerance=sigma, translation_tolerance=SIGMA_T,
                    reflections=False, keep=300, limit=20)
    assert ranking.hypotheses_scored == enumerated == len(cands) * 4 * 24 * 24 * 9
    assert ranking.compared_translation is True and ranking.pairs == 2
    _check_listed(ranking, table, sigma, cands)
    best = min(table.values(), key=lambda v: v["cost"])
    assert ranking.groups[0].lead.cost == pytest.approx(best["cost"], rel=1e-9, abs=1e-9)
    assert ranking.groups[0].lead.rotation_rms < 1e-9 and ranking.groups[0].lead.translation_rms < 1e-9


# --- the bounded search against a full sort -------------------------------------------------------------------
@pytest.mark.parametrize("seed", range(6))
def test_the_bounded_search_finds_the_same_best_as_a_full_sort(seed):
    rng = np.random.default_rng(seed)
    c_n, p_n, q_n, s_n, f_n = 5, 7, 6, 3, 2
    a = rng.normal(size=(c_n, p_n, q_n)) * 4
    b = rng.normal(size=(c_n, s_n, f_n, p_n)) * 4
    a[rng.random(a.shape) < 0.3] = np.inf                         # cells ruled out (improper decodes)
    b[rng.random(b.shape) < 0.2] = np.inf
    full = a[:, None, None, :, :] + b[..., None]                  # (C, S, F, P, Q): every hypothesis
    finite = np.sort(full[np.isfinite(full)])
    for top_n in (1, 2, 9, 40, finite.size, finite.size + 50):
        rows, costs = scorer._best_separable(a, b, top_n)
        m = min(top_n, finite.size)
        assert rows.shape == (m, 5) and costs.shape == (m,)
        np.testing.assert_array_equal(costs, finite[:m])           # the exact best, ascending
        c, s, f, p, q = rows.T
        np.testing.assert_array_equal(full[c, s, f, p, q], costs)  # each row names the hypothesis of its cost
        assert len({tuple(r) for r in rows.tolist()}) == m         # no hypothesis twice
    # without translation parts: rows (c, 0, 0, p, q)
    rows, costs = scorer._best_separable(a, None, 12)
    flat = np.sort(a[np.isfinite(a)])[:12]
    np.testing.assert_array_equal(costs, flat)
    assert np.all(rows[:, 1] == 0) and np.all(rows[:, 2] == 0)
    np.testing.assert_array_equal(a[rows[:, 0], rows[:, 3], rows[:, 4]], costs)


def test_the_bounded_search_with_nothing_finite_returns_empty_integer_rows():
    rows, costs = scorer._best_separable(np.full((2, 3, 3), np.inf), None, 5)
    assert rows.shape == (0, 5) and rows.dtype.kind == "i"
    assert costs.shape == (0,) and costs.dtype == np.float64



# --- the four relations -----------------------------------------------------------------------------------------
STATED_GRID = [(count, kind, text) for count, kind in ((4, None), (3, "euler"), (3, "rotation-vector"), (9, None),
                                                       (7, None), (12, None))
               for text in (None, "action=passive", "direction=child-from-parent",
                            "action=passive direction=child-from-parent", "action=active direction=parent-from-child")]


@pytest.mark.parametrize("count,kind,text", STATED_GRID)
def test_the_four_relations_are_distinct_and_charged_as_the_slip_counts_them(count, kind, text):
    stated = stated_reading(count, kind, text)
    rels = scorer.relations(stated)
    assert len(rels) == 4 and len(set((a, d, t) for a, d, t, _ in rels)) == 4
    assert rels[0][:3] == (stated.convention.action, stated.convention.direction, False) and rels[0][3] == 0.0
    for reading in readings_of(stated)[:3]:
        base = Slip(stated, reading).deviations()
        want = {(true.convention.action, true.convention.direction, t) for true, t in _relations(stated, reading)}
        assert {(a, d, t) for a, d, t, _ in rels} == want
        for action, direction, transposed, charge in rels:
            true = reading.with_fields(action=action, direction=direction)
            # the scorer's charge for a relation is what the whole slip adds to the reading's own count
            assert Slip(stated, true, transposed).deviations() - base == charge
    if not stated.parameterised:
        assert [t for *_, t, _ in rels] == [False, True, False, True]
        assert {a for a, *_ in rels} == {stated.convention.action}


def test_a_field_the_kind_does_not_use_changes_nothing():
    # "action" means nothing for a matrix: stated or not, the matrix ranking is the same
    rot = _poses(21, 2)
    numbers = rot.as_matrix().transpose(0, 2, 1).reshape(2, 9)                # scipy
    side = [ExpectedSide(rot.as_matrix(), None, 0.0, "as given")]
    out = []
    for text in (None, "action=passive"):
        stated = stated_reading(9, None, text)
        cands = [Candidate(r, numbers) for r in readings_of(stated)]
        ranking = score(stated, cands, side, rotation_tolerance=0.01, translation_tolerance=0.01, limit=3)
        out.append([(g.lead.cost, g.lead.rotation.tobytes()) for g in ranking.groups])
    assert out[0] == out[1]


# --- score's arguments ------------------------------------------------------------------------------------------
def _small():
    stated = stated_reading(4, None, "scalar=last")
    rot = _poses(3, 2)
    cands = [Candidate(r, rot.as_quat()) for r in readings_of(stated)]       # scipy: x y z w
    return stated, cands, [ExpectedSide(rot.as_matrix(), None, 0.0, "as given")]


@pytest.mark.parametrize("kwargs,error,message", [
    (dict(rotation_tolerance=-1.0), BadToleranceError,
     "rotation_tolerance: got -1.0 (a tolerance must be > 0); accepted a finite number from 1e-150 to 1e+150 radians"),
    (dict(rotation_tolerance="1"), ToleranceTypeError,
     "rotation_tolerance: got text '1'; expected a real number: accepted a finite number from 1e-150 to 1e+150 "
     "radians"),
    (dict(translation_tolerance="a"), ToleranceTypeError,
     "translation_tolerance: got text 'a'; expected a real number: accepted a finite number from 1e-150 to 1e+150 "
     "(length units, as the numbers)"),
    (dict(translation_tolerance=0.0), BadToleranceError,
     "translation_tolerance: got 0.0 (a tolerance must be > 0); accepted a finite number from 1e-150 to 1e+150 "
     "(length units, as the numbers)"),
    (dict(keep=0), BadCountError, "keep: got 0; expected a whole number >= 1 (how many hypotheses to keep)"),
    (dict(keep=2.0), CountTypeError,
     "keep: got 2.0 of type float; expected a whole number (int) >= 1 (how many hypotheses to keep)"),
    (dict(limit=0), BadCountError, "limit: got 0; expected a whole number >= 1 (how many explanations to list)"),
    (dict(limit=0.5), CountTypeError,
     "limit: got 0.5 of type float; expected a whole number (int) >= 1 (how many explanations to list)"),
    (dict(reflections=1), WrongTypeError, "reflections: got 1 of type int; expected True or False"),
])
def test_bad_arguments_are_refused_word_for_word(kwargs, error, message):
    stated, cands, side = _small()
    args = dict(rotation_tolerance=0.01, translation_tolerance=0.01) | kwargs
    with pytest.raises(error) as info:
        score(stated, cands, side, **args)
    assert str(info.value) == message


@pytest.mark.parametrize("which", ["candidates", "expected"])
def test_nothing_to_score_is_refused_word_for_word(which):
    stated, cands, side = _small()
    cands, side = (([], side) if which == "candidates" else (cands, []))
    with pytest.raises(WrongShapeError) as info:
        score(stated, cands, side, rotation_tolerance=0.01, translation_tolerance=0.01)
    assert str(info.value) == (f"score: got {len(cands)} candidate reading(s) and {len(side)} expected side(s); "
                               "expected at least one of each")


def _shape(ranking):
    return [(g.lead.slip, round(g.lead.cost, 9), tuple(h.slip for h in g.same), tuple(h.slip for h, _ in g.separable))
            for g in ranking.groups]


def test_the_defaults_score_mirrors_keep_64_and_list_5():
    stated, cands, side = _small()
    tol = dict(rotation_tolerance=math.radians(20), translation_tolerance=0.01)
    default = score(stated, cands, side, **tol)
    assert default.hypotheses_scored == len(cands) * 4 * 48 * 48            # mirrors are scored by default
    assert default.hypotheses_scored == score(stated, cands, side, reflections=True, **tol).hypotheses_scored
    assert len(default.groups) == 5 and len(score(stated, cands, side, limit=6, **tol).groups) == 6
    assert _shape(default) == _shape(score(stated, cands, side, keep=64, **tol))
    # the data can tell 64 from 65 kept: so the default is 64
    wide = dict(limit=200, **tol)
    assert _shape(score(stated, cands, side, **wide)) == _shape(score(stated, cands, side, keep=64, **wide))
    assert _shape(score(stated, cands, side, keep=65, **wide)) != _shape(score(stated, cands, side, keep=64, **wide))
    one = score(stated, cands[:1], side, keep=1, **tol)                     # one candidate, one hypothesis
    assert len(one.groups) == 1 and not one.groups[0].same and not one.groups[0].separable


# --- angles between orthogonal matrices --------------------------------------------------------------------------
def test_the_angle_between_a_rotation_and_a_mirror_follows_the_trace():
    eye = np.eye(3)
    mirror_z = np.diag([1.0, 1.0, -1.0])
    assert scorer.angles_between(eye, mirror_z) == pytest.approx(math.pi / 2, abs=1e-15)     # trace 1
    assert scorer.angles_between(eye, -eye) == pytest.approx(math.pi, abs=1e-15)              # trace -3, clipped
    turned = Rotation.from_rotvec([0, 0, 0.7]).as_matrix()                                     # scipy
    # a turn of 0.7 about z then the z mirror: trace 2 cos 0.7 - 1, angle arccos(cos 0.7 - 1)
    assert scorer.angles_between(eye, turned @ mirror_z) == pytest.approx(math.acos(math.cos(0.7) - 1), abs=1e-12)
    point = Rotation.from_rotvec([0.0, 0.0, math.pi]).as_matrix() @ (-eye)   # the point reflection of a half turn
    assert scorer.angles_between(eye, point) == pytest.approx(math.pi / 2, abs=1e-12)
    both = scorer.angles_between(np.stack([eye, eye]), np.stack([turned, -eye]))
    np.testing.assert_allclose(both, [0.7, math.pi], atol=1e-12)


def test_det3_is_the_determinant():
    m = np.random.default_rng(4).normal(size=(20, 3, 3))
    np.testing.assert_allclose(scorer.det3(m), np.linalg.det(m), rtol=1e-12, atol=1e-12)   # numpy: LU determinant


# --- mirrored numbers -------------------------------------------------------------------------------------------
def test_every_listed_hypothesis_decodes_proper_rotations_even_from_mirrored_numbers():
    rot = _poses(30, 3)
    mirrored = rot.as_matrix() @ np.diag([1.0, 1.0, -1.0])                   # a handedness slip in the numbers
    stated = stated_reading(9)
    cands = [Candidate(r, mirrored.reshape(3, 9)) for r in readings_of(stated)]
    side = [ExpectedSide(rot.as_matrix(), None, 0.0, "as given")]
    ranking = score(stated, cands, side, rotation_tolerance=0.01, translation_tolerance=0.01, limit=10)
    for _, h in _listed(ranking):
        assert np.all(np.linalg.det(h.rotation) > 0)
    lead = ranking.groups[0].lead
    assert lead.rotation_rms < 1e-9 and lead.slip.improper                     # the mirror is named, not hidden
    # reflections left out: the numbers are mirrored, so what there is gets scored (24 x 24 remaps)
    plain = score(stated, cands, side, rotation_tolerance=0.01, translation_tolerance=0.01, reflections=False)
    assert plain.hypotheses_scored == len(cands) * 4 * 24 * 24
    assert plain.groups and all(np.all(np.linalg.det(h.rotation) < 0) for _, h in _listed(plain))


def test_as_many_mirrored_pairs_as_proper_ones_take_the_proper_pairs_at_their_word():
    rot = _poses(31, 2).as_matrix()
    numbers = np.stack([rot[0], rot[1] @ np.diag([1.0, 1.0, -1.0])]).reshape(2, 9)
    stated = stated_reading(9)
    cands = [Candidate(r, numbers) for r in readings_of(stated)]
    ranking = score(stated, cands, [ExpectedSide(rot, None, 0.0, "as given")], rotation_tolerance=0.01,
                    translation_tolerance=0.01, limit=10)
    for _, h in _listed(ranking):
        assert np.linalg.det(h.rotation[0]) > 0 and np.linalg.det(h.rotation[1]) < 0


# --- grouping: what "the same" means ----------------------------------------------------------------------------
def _fresh(n, translation):
    rng = np.random.default_rng(99)
    q = rng.normal(size=(n, 4))
    q /= np.linalg.norm(q, axis=1, keepdims=True)
    return np.hstack([q, rng.normal(size=(n, 3))]) if translation else q


def _at_the_origin(seed):
    """Position + quaternion numbers of the inverse pose with zero translations, and their ranking."""
    rot = _poses(seed, 2)
    stated = stated_reading(7, None, "scalar=last")
    numbers = np.hstack([rot.inv().as_quat(), np.zeros((2, 3))])             # scipy: the inverse, x y z w
    cands = [Candidate(r, numbers) for r in readings_of(stated)]
    side = [ExpectedSide(rot.as_matrix(), np.zeros((2, 3)), 0.0, "as given")]
    ranking = score(stated, cands, side, rotation_tolerance=0.01, translation_tolerance=0.001, limit=5)
    return stated, ranking


@pytest.mark.parametrize("seed", range(3))
def test_same_and_separable_hold_for_translations_too(seed):
    # the sample's translation is zero, so every length scale and translation frame agrees on it
    stated, ranking = _at_the_origin(40 + seed)
    fresh = _fresh(6, True)
    saw_same = saw_translation_only = False
    for g in ranking.groups:
        ra, ta = g.lead.slip.decode(fresh)
        for h in g.same:
            rb, tb = h.slip.decode(fresh)
            np.testing.assert_allclose(rb, ra, atol=1e-9, err_msg="called the same, differs on a new input")
            np.testing.assert_allclose(tb, ta, atol=1e-9, err_msg="called the same, differs on a new input")
            saw_same = True
        for h, sample in g.separable:
            assert sample is not None
            r0, t0 = g.lead.slip.decode(sample[None])
            r1, t1 = h.slip.decode(sample[None])
            d_rot = float(np.max(np.abs(r0 - r1)))
            d_t = float(np.max(np.abs(t0 - t1)))
            assert max(d_rot, d_t) > 1e-6, "the sample shown does not separate them"
            saw_translation_only |= d_rot < 1e-9
    assert saw_same and saw_translation_only


def test_numbers_read_in_different_orders_get_no_sample_and_no_same():
    # named numbers are put in each reading's own slot order: no one input goes through every slip alike
    rot = _poses(50, 2)
    stated = stated_reading(3, "euler", "unit=degrees")
    readings = readings_of(stated)
    angles = rot.as_euler("ZYX", degrees=True)                               # scipy: intrinsic z-y-x
    cands = [Candidate(r, angles if i % 2 == 0 else angles[:, ::-1].copy()) for i, r in enumerate(readings[:6])]
    side = [ExpectedSide(rot.as_matrix(), None, 0.0, "as given")]
    sigma = math.radians(0.5)
    ranking = score(stated, cands, side, rotation_tolerance=sigma, translation_tolerance=0.01, keep=120, limit=20,
                    reflections=False)
    table, _ = oracle(stated, cands, side, sigma, reflections=False)
    _check_listed(ranking, table, sigma, cands)                                # each candidate read its own numbers
    members = 0
    for g in ranking.groups:
        assert g.same == ()
        assert all(sample is None for _, sample in g.separable)
        members += len(g.separable)
    assert members >= 1


def test_equal_numbers_in_separate_arrays_are_one_input():
    rot = _poses(60, 2)
    stated = stated_reading(4)
    numbers = rot.inv().as_quat(scalar_first=True)                           # scipy: the inverse, scalar first
    cands = [Candidate(r, numbers.copy()) for r in readings_of(stated)]      # equal, not the same object
    ranking = score(stated, cands, [ExpectedSide(rot.as_matrix(), None, 0.0, "as given")],
                    rotation_tolerance=0.01, translation_tolerance=0.01)
    assert len(ranking.groups[0].same) >= 1                                   # JPL, passive, inverse: one mistake


# --- grouping at its edges: hypotheses built by hand ------------------------------------------------------------
_Q = stated_reading(4, None, "scalar=last")
_ONE = np.array([[0.0, 0.0, 0.0, 1.0]])


def _slip(i, **fields):
    return Slip(_Q, readings_of(_Q)[0].with_fields(**fields) if fields else readings_of(_Q)[0], False, i, 0)


def _hyp(slip, res, *, cost, dev=0.0, rot=None, tres=None, t=None, expected=0):
    return scorer.Hypothesis(slip, expected, np.asarray(res, float), None if tres is None else np.asarray(tres, float),
                             np.eye(3)[None] if rot is None else rot, t, float(cost), float(dev), 0)


def _groups(hyps, rtol=0.5, ttol=0.87, cands=None):
    return scorer._group(hyps, _Q, cands or [Candidate(readings_of(_Q)[0], _ONE)], 10, rtol, ttol)


def test_residuals_and_poses_this_close_count_as_equal():
    nudged = np.eye(3)[None].copy()
    nudged[0, 0, 1] = scorer.EQUIVALENT                                        # exactly EQUIVALENT away
    further = np.eye(3)[None].copy()
    further[0, 0, 1] = 2 * scorer.EQUIVALENT
    hyps = [_hyp(_slip(0), [0.0], cost=0), _hyp(_slip(1), [scorer.EQUIVALENT], cost=1, dev=1),
            _hyp(_slip(2), [0.0], cost=2, dev=1, rot=nudged), _hyp(_slip(3), [0.0], cost=3, dev=1, rot=further)]
    groups = _groups(hyps)
    assert len(groups) == 2
    assert {h.slip for h, _ in groups[0].separable} | {h.slip for h in groups[0].same} == {_slip(1), _slip(2)}
    assert groups[1].lead.slip == _slip(3)


def test_translations_this_close_count_as_equal_and_opposite_ones_do_not():
    t = np.array([[0.0, 0.0, 1.0]])
    nudged = t.copy()
    nudged[0, 0] = scorer.EQUIVALENT
    hyps = [_hyp(_slip(0), [0.0], cost=0, tres=[0.0], t=t),
            _hyp(_slip(1), [0.0], cost=1, dev=1, tres=[scorer.EQUIVALENT], t=nudged),
            _hyp(_slip(2), [0.0], cost=2, dev=1, tres=[0.0], t=-t)]               # same residual, other pose
    groups = _groups(hyps, ttol=2.0)
    assert len(groups) == 2 and groups[1].lead.slip == _slip(2)
    assert len(groups[0].same) + len(groups[0].separable) == 1


def test_a_group_speaks_for_one_reading_of_the_expected_side():
    hyps = [_hyp(_slip(0), [0.1], cost=0), _hyp(_slip(0), [0.1], cost=1, dev=1, expected=1)]
    groups = _groups(hyps)
    assert [g.lead.expected for g in groups] == [0, 1]


@pytest.mark.parametrize("rot_a,t_a,rot_b,t_b", [
    ([0.6], None, [0.5], None),          # the rotation fits at exactly the tolerance
    ([0.1], [0.9], [0.1], [0.87]),       # the translation fits at exactly the tolerance, the cheaper one not at all
    ([0.6], [0.1], [0.1], [0.87]),       # the cheaper one's translation fits but its rotation does not
    ([0.1, 0.1], [0.9, 0.9], [0.1, 0.1], [0.87, 0.87]),   # per pair: root mean square over the pairs
])
def test_an_explanation_that_fits_ranks_before_a_cheaper_one_that_does_not(rot_a, t_a, rot_b, t_b):
    n = len(rot_a)
    turned = Rotation.from_rotvec([0.0, 0.0, 1.0]).as_matrix()[None].repeat(n, 0)   # scipy: another pose
    tb = None if t_b is None else np.ones((n, 3))
    hyps = [_hyp(_slip(0), rot_a, cost=1, tres=t_a, t=None if t_a is None else np.zeros((n, 3)),
                 rot=np.eye(3)[None].repeat(n, 0)),
            _hyp(_slip(1), rot_b, cost=2, dev=1, tres=t_b, t=tb, rot=turned)]
    assert [g.lead.slip for g in _groups(hyps, rtol=0.5, ttol=0.87)] == [_slip(1), _slip(0)]


def test_members_claiming_more_than_one_mistake_beyond_the_lead_are_left_out():
    hyps = [_hyp(_slip(1), [0.0], cost=1, dev=1), _hyp(_slip(2), [0.0], cost=2, dev=2),
            _hyp(_slip(3), [0.0], cost=3, dev=3)]
    (group,) = _groups(hyps)
    assert group.lead.slip == _slip(1)
    assert [h.slip for h in group.same] + [h.slip for h, _ in group.separable] == [_slip(2)]


def test_two_ways_of_one_mistake_are_the_same_and_without_a_common_input_they_are_only_separable():
    jpl, passive = Slip(_Q, readings_of(_Q)[0].with_fields(algebra="jpl")), \
        Slip(_Q, readings_of(_Q)[0].with_fields(action="passive"))
    hyps = [_hyp(jpl, [0.0], cost=1, dev=1), _hyp(passive, [0.0], cost=1, dev=1)]
    (group,) = _groups(hyps)
    assert len(group.same) == 1 and group.separable == ()
    assert {group.lead.slip, group.same[0].slip} == {jpl, passive}
    # the candidates read differently ordered numbers: no probe, so nothing can be called the same
    other = Candidate(readings_of(_Q)[1], _ONE[:, ::-1].copy())
    (group,) = _groups(hyps, cands=[Candidate(readings_of(_Q)[0], _ONE), other])
    assert group.same == () and len(group.separable) == 1 and group.separable[0][1] is None
    assert {group.lead.slip, group.separable[0][0].slip} == {jpl, passive}


def test_a_member_that_reads_the_probe_otherwise_is_separable_by_the_probe_that_differs_most():
    # two slips that agree on this sample (built so) but not on other inputs: a parent remap and none
    hyps = [_hyp(_slip(0), [0.0], cost=0), _hyp(_slip(5), [0.0], cost=1, dev=1)]
    (group,) = _groups(hyps)
    assert group.same == () and len(group.separable) == 1
    member, sample = group.separable[0]
    probe = scorer._probe_numbers(_Q)
    r0, _ = _slip(0).decode(probe)
    r1, _ = _slip(5).decode(probe)
    apart = Rotation.from_matrix(np.swapaxes(r0, -1, -2) @ r1).magnitude()      # scipy: angle per probe pose
    np.testing.assert_array_equal(sample, probe[int(np.argmax(apart))])


@pytest.mark.parametrize("seed", range(3))
def test_the_sample_shown_is_the_probe_on_which_the_two_differ_most(seed):
    stated, ranking = _at_the_origin(70 + seed)
    probe = scorer._probe_numbers(stated)
    shown = 0
    for g in ranking.groups:
        r0, t0 = g.lead.slip.decode(probe)
        for h, sample in g.separable:
            r1, t1 = h.slip.decode(probe)
            apart = (Rotation.from_matrix(np.swapaxes(r0, -1, -2) @ r1).magnitude()   # scipy: angle per probe pose
                     + np.linalg.norm(t1 - t0, axis=-1))                               # plus metres apart
            np.testing.assert_array_equal(sample, probe[int(np.argmax(apart))])
            shown += 1
    assert shown >= 2


def test_even_when_the_prior_outweighs_the_fit_no_mirrored_decode_is_listed():
    # a tolerance of 10 radians makes a mirrored reading's 90-degree misfit cheap: still never listed
    rot = _poses(30, 3)
    mirrored = rot.as_matrix() @ np.diag([1.0, 1.0, -1.0])
    stated = stated_reading(9)
    cands = [Candidate(r, mirrored.reshape(3, 9)) for r in readings_of(stated)]
    ranking = score(stated, cands, [ExpectedSide(rot.as_matrix(), None, 0.0, "as given")], rotation_tolerance=10.0,
                    translation_tolerance=0.01, limit=10)
    assert all(np.all(np.linalg.det(h.rotation) > 0) for _, h in _listed(ranking))


@pytest.mark.parametrize("text,kind", [("unit=degrees", "position-euler"), ("unit=degrees", "euler"),
                                       (None, "position-euler"), (None, "position-rotation-vector"),
                                       ("scalar=last", "position-quaternion")])
def test_every_candidate_is_read_from_its_own_numbers_as_scipy_reads_them(text, kind):
    count = 6 if kind in ("position-euler", "position-rotation-vector") else (3 if kind == "euler" else 7)
    stated = stated_reading(count, kind, text)
    rng = np.random.default_rng(8)
    readings = readings_of(stated)
    cands = [Candidate(r, rng.normal(size=(2, count)) * 0.7) for r in readings]   # each its own numbers
    reads = scorer._raw_reads(cands)
    for cand, (m, t) in zip(cands, reads):
        r, c = cand.reading, cand.reading.convention
        moving = (r.position_first and r.kind.startswith("position-"))
        rot_nums = cand.numbers[:, 3:] if moving else (cand.numbers[:, :-3] if r.kind.startswith("position-")
                                                       else cand.numbers)
        if r.rotation_kind == "euler":
            seq = c.axes_letters.upper() if c.intrinsic else c.axes_letters.lower()
            want = Rotation.from_euler(seq, rot_nums, degrees=c.unit == "degrees")     # scipy: upper = intrinsic
        elif r.rotation_kind == "quaternion":
            want = Rotation.from_quat(rot_nums, scalar_first=c.scalar == "first")      # scipy: Hamilton
            if c.algebra == "jpl":                       # the same numbers give R^T (Trawny & Roumeliotis 2005)
                want = want.inv()
        else:
            want = Rotation.from_rotvec(rot_nums, degrees=c.unit == "degrees")         # scipy
        np.testing.assert_allclose(m, want.as_matrix(), atol=1e-12)
        if r.kind.startswith("position-"):
            np.testing.assert_array_equal(t, cand.numbers[:, :3] if r.position_first else cand.numbers[:, -3:])
            assert t.dtype == np.float64
        else:
            assert t is None
