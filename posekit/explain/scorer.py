"""One scorer for N >= 1 pose pairs: every slip scored at once, the best ones ranked and grouped.

Hypotheses: every candidate true reading of the numbers (:func:`readings_of`) x
relation (as stated; the rotation transposed -- the ``action`` field for angles and
quaternions, the block alone for matrices; the ``direction`` field flipped; both) x parent
remap x child remap (48 x 48 with reflections) x length scale x translation frame x
each reading of the expected side.  Scoring is vectorised over hypotheses x pairs:

* rotation: ``sum_i |B_i - P R_i Q|_F^2 = sum |B|^2 + 3N - 2 <P R_i Q, B_i>``, the inner
  products of every (P, Q) from one 9x9 cross-covariance per (reading, relation); the
  chordal distance ``|A - B|_F^2 = 8 sin^2(theta/2)`` stands in for ``2 theta^2`` while
  picking the short list, which is then re-scored with the exact geodesic angle
  (atan2 form, common practice);
* translation: ``sum_i |s t_i - P v_i|^2`` in closed form from 3x3 sums;
* cost ``= sum 0.5 (theta_i / sigma_r)^2 + sum 0.5 (|dt_i| / sigma_t)^2 + PRIOR_WEIGHT * deviations``.

Given (reading, relation, parent remap) the rotation part depends on the child remap
only and the translation part on scale and frame only, so the exact best ``keep``
hypotheses are found without forming the full grid (:func:`_best_separable`).
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from ..core import rotation as rot
from ..core.checks import checked_count, checked_flag, checked_tolerance
from ..core.errors import WrongShapeError
from .readings import Reading, read_numbers, write_numbers
from .slips import LENGTH_SCALES, PRIOR_WEIGHT, REMAPS, STATED_COST, TRANSLATION_FRAMES, Slip, remap_cost

__all__ = ["Candidate", "ExpectedSide", "Hypothesis", "Group", "Ranking", "score", "angles_between",
           "EQUIVALENT"]

#: Residuals this close (radians, metres) count as exactly equal.
EQUIVALENT = 1e-9


@dataclass(frozen=True, eq=False)
class Candidate:
    """A true reading to try and the numbers ``(N, n)`` in its slot order (named input reorders them)."""

    reading: Reading
    numbers: np.ndarray


@dataclass(frozen=True, eq=False)
class ExpectedSide:
    """One reading of the expected side: ``rotation (N, 3, 3)``, ``translation (N, 3)`` or None,
    the deviations charged for taking it (0 for the plausible reading) and its words."""

    rotation: np.ndarray
    translation: np.ndarray | None
    deviations: float
    words: str


@dataclass(frozen=True, eq=False)
class Hypothesis:
    """One scored slip: per-pair residuals, the decoded (corrected) pose, its cost, and the index of the
    candidate whose numbers it read."""

    slip: Slip
    expected: int
    rotation_residuals: np.ndarray
    translation_residuals: np.ndarray | None
    rotation: np.ndarray
    translation: np.ndarray | None
    cost: float
    deviations: float
    candidate: int = -1

    @property
    def rotation_rms(self) -> float:
        return float(np.sqrt(np.mean(self.rotation_residuals ** 2)))

    @property
    def translation_rms(self) -> float | None:
        tr = self.translation_residuals
        return None if tr is None else float(np.sqrt(np.mean(tr ** 2)))


@dataclass(frozen=True, eq=False)
class Group:
    """Hypotheses that decode the numbers to the same pose on every pair: ``lead`` speaks for them
    (members that claim more than one deviation beyond the lead's are left out).

    ``same``: slips that give the lead's pose for *every* input (the same mistake
    written two ways); ``separable``: ``(hypothesis, numbers)`` pairs that agree on
    this sample only, with stated-reading numbers of a pose on which they differ (None
    when the slips read differently ordered numbers, so no common probe exists).
    """

    lead: Hypothesis
    same: tuple[Hypothesis, ...]
    separable: tuple[tuple[Hypothesis, np.ndarray], ...]


@dataclass(frozen=True, eq=False)
class Ranking:
    groups: tuple[Group, ...]
    hypotheses_scored: int
    stated: Reading
    pairs: int
    compared_translation: bool


def det3(m) -> np.ndarray:
    """Determinants of ``(..., 3, 3)`` matrices by the triple product (no LU per matrix)."""
    m = np.asarray(m)
    return np.einsum("...i,...i->...", m[..., 0, :], np.cross(m[..., 1, :], m[..., 2, :]))


def angles_between(a, b) -> np.ndarray:
    """Geodesic angle between orthogonal ``(..., 3, 3)`` matrices (either may be improper).

    Proper relative matrix: atan2 form through the quaternion, accurate near 0 and pi
    (common practice).  Improper (a mirror is no rotation): the trace formula, >= 90 degrees.
    """
    rel = np.swapaxes(np.asarray(a), -1, -2) @ np.asarray(b)
    det = det3(rel)
    proper = det > 0
    out = np.empty(rel.shape[:-2])
    if np.any(proper):
        q = rot.quaternion_of_matrix(rel[proper])
        out[proper] = 2.0 * np.arctan2(np.sqrt(np.sum(q[..., 1:] ** 2, axis=-1)), np.abs(q[..., 0]))
    if np.any(~proper):
        tr = np.trace(rel[~proper], axis1=-2, axis2=-1)
        out[~proper] = np.arccos(np.clip((tr - 1) / 2, -1, 1))
    return out


def _flip(value: str, choices: tuple[str, str]) -> str:
    return choices[1] if value == choices[0] else choices[0]


def relations(stated: Reading):
    """The four relations as (action, direction, transposed, deviations) relative to the stated reading:
    as stated; the rotation transposed (the ``action`` field of angles and quaternions, the block
    alone of a matrix); the ``direction`` flipped; both."""
    c = stated.convention
    flip_dir = _flip(c.direction, ("parent-from-child", "child-from-parent"))
    dev_dir = STATED_COST if "direction" in stated.stated else 1.0
    if stated.parameterised:
        flip_act = _flip(c.action, ("active", "passive"))
        dev_act = STATED_COST if "action" in stated.stated else 1.0
        return [(c.action, c.direction, False, 0.0), (flip_act, c.direction, False, dev_act),
                (c.action, flip_dir, False, dev_dir), (flip_act, flip_dir, False, dev_act + dev_dir)]
    return [(c.action, c.direction, False, 0.0), (c.action, c.direction, True, 1.0),
            (c.action, flip_dir, False, dev_dir), (c.action, flip_dir, True, 1.0 + dev_dir)]


def _raw_reads(candidates: list[Candidate]):
    """``read_numbers`` of every candidate with action active and direction parent-from-child.

    Euler readings of the same numbers are built together: the elementary turns of each
    (axis, slot, unit) once, then two matrix products per sequence (intrinsic ``Rp(a) Rq(b)
    Rr(c)``, extrinsic ``Rr(c) Rq(b) Rp(a)``, the products of posekit.core.rotation).
    """
    out: list = [None] * len(candidates)
    elementary: dict = {}
    for i, c in enumerate(candidates):
        r = c.reading
        if r.rotation_kind != "euler":
            out[i] = read_numbers(r, c.numbers, action="active", direction="parent-from-child")
            continue
        key = (id(c.numbers), r.position_first, r.convention.unit)
        if key not in elementary:
            rot_nums = c.numbers[..., 3:] if r.kind.startswith("position-") and r.position_first else \
                (c.numbers[..., :-3] if r.kind.startswith("position-") else c.numbers)
            ang = rot_nums * (np.pi / 180.0 if r.convention.unit == "degrees" else 1.0)
            mats = {}
            for axis in "xyz":
                for slot in range(3):
                    mats[axis, slot] = rot.elementary_matrix(axis, ang[..., slot])
            trans = None if not r.kind.startswith("position-") else \
                np.array(c.numbers[..., :3] if r.position_first else c.numbers[..., -3:], dtype=np.float64)
            elementary[key] = (mats, trans)
        mats, trans = elementary[key]
        p, q, w = r.convention.axes_letters
        if r.convention.intrinsic:
            m = mats[p, 0] @ mats[q, 1] @ mats[w, 2]
        else:
            m = mats[w, 2] @ mats[q, 1] @ mats[p, 0]
        out[i] = (m, None if trans is None else trans.copy())
    return out


@lru_cache(maxsize=2)
def _remap_tables(reflections: bool):
    """The remaps scored, the prior of every (parent, child) pair, and that prior with +inf where the
    decoded block would be improper, for each sign of det(B) -- the same for every call (read-only)."""
    remaps = np.asarray(REMAPS if reflections else REMAPS[:24])
    rc = remap_cost(np.arange(len(remaps)))
    det_r = np.round(det3(remaps))
    pq_prior = PRIOR_WEIGHT * (rc[:, None] + rc[None, :])                 # (P, Q)
    same_sign = (det_r[:, None] * det_r[None, :]) > 0
    by_sign = {1.0: np.where(same_sign, pq_prior, np.inf), -1.0: np.where(same_sign, np.inf, pq_prior)}
    for a in (pq_prior, *by_sign.values()):
        a.setflags(write=False)
    return remaps, pq_prior, by_sign


def _best_separable(a_rot: np.ndarray, b_full: np.ndarray | None, top_n: int):
    """Exact ``top_n`` of ``A[c, p, q] + B[c, s, f, p]`` (``c`` a flattened leading index).

    Given ``(c, p)`` the parts are independent, so a cell's best is ``min_q A + min_{s,f} B``;
    the ``top_n``-th smallest cell best bounds the ``top_n``-th hypothesis, so only cells
    at or below it are expanded.  Rows are ``(c, s, f, p, q)``.
    """
    c_n, p_n, q_n = a_rot.shape
    if b_full is None:
        b_full = np.zeros((c_n, 1, 1, p_n))
    _, s_n, f_n, _ = b_full.shape
    b_cells = np.transpose(b_full, (0, 3, 1, 2)).reshape(c_n, p_n, s_n * f_n)
    lower = a_rot.min(axis=-1) + b_cells.min(axis=-1)                     # (C, P)
    flat_lb = lower.reshape(-1)
    finite = np.isfinite(flat_lb)
    if not np.any(finite):
        return np.zeros((0, 5), dtype=int), np.zeros(0)
    n = min(top_n, int(finite.sum()))
    bound = np.partition(np.where(finite, flat_lb, np.inf), n - 1)[n - 1]
    cells = np.flatnonzero(flat_lb <= bound)
    cc, pp = np.unravel_index(cells, lower.shape)
    sub = b_cells[cc, pp][:, :, None] + a_rot[cc, pp][:, None, :]        # (cells, S*F, Q)
    flat = sub.reshape(-1)
    m = min(top_n, int(np.isfinite(flat).sum()))
    idx = np.argpartition(flat, m - 1)[:m]
    idx = idx[np.argsort(flat[idx], kind="stable")]
    cell, sf, q = np.unravel_index(idx, sub.shape)
    s_i, f_i = np.divmod(sf, f_n)
    return np.stack([cc[cell], s_i, f_i, pp[cell], q], axis=1), flat[idx]


def score(stated: Reading, candidates: list[Candidate], expected: list[ExpectedSide], *,
          rotation_tolerance: float, translation_tolerance: float, reflections: bool = True,
          keep: int = 64, limit: int = 5) -> Ranking:
    """Score every slip of ``candidates`` against every reading of the expected side; rank and group.

    ``candidates[i].numbers`` and every expected side hold the same N pairs.  Returns the
    best ``limit`` groups (see :class:`Group`).
    """
    rotation_tolerance = checked_tolerance(rotation_tolerance, "rotation_tolerance", " radians")
    translation_tolerance = checked_tolerance(translation_tolerance, "translation_tolerance",
                                              " (length units, as the numbers)")
    keep = checked_count(keep, "keep", " (how many hypotheses to keep)")
    limit = checked_count(limit, "limit", " (how many explanations to list)")
    reflections = checked_flag(reflections, "reflections")
    if not len(candidates) or not len(expected):
        raise WrongShapeError(f"score: got {len(candidates)} candidate reading(s) and {len(expected)} expected "
                              "side(s); expected at least one of each")
    remaps, pq_prior, pq_by_sign = _remap_tables(reflections)
    n_remap = len(remaps)
    rels = relations(stated)
    n_pairs = candidates[0].numbers.shape[0]
    raws = _raw_reads(candidates)
    has_t_obs = raws[0][1] is not None
    compare_t = has_t_obs and all(e.translation is not None for e in expected)
    k_n = len(candidates)
    # rotation and translation of every (reading, relation) as the scorer compares them (Slip.decode's steps)
    m_all = np.stack([m for m, _ in raws])                                  # (K, N, 3, 3)
    m_t = np.swapaxes(m_all, -1, -2)
    param = np.array([c.reading.parameterised for c in candidates])[:, None, None, None]
    x_n = len(rels)
    b_rot = np.empty((k_n, x_n, n_pairs, 3, 3))
    t_rel = np.empty((k_n, x_n, n_pairs, 3)) if has_t_obs else None
    t_all = np.stack([t for _, t in raws]) if has_t_obs else None
    for x, (action, direction, transposed, _) in enumerate(rels):
        a = np.where(param, m_t, m_all) if action == "passive" else m_all
        if direction == "child-from-parent":
            b = np.swapaxes(a, -1, -2)
            if has_t_obs:
                t_rel[:, x] = -np.einsum("knba,knb->kna", a, t_all)
        else:
            b = a
            if has_t_obs:
                t_rel[:, x] = t_all
        # the block as read is transposed, the translation is not
        b_rot[:, x] = np.swapaxes(b, -1, -2) if transposed else b
    dev_k = np.array([Slip(stated, c.reading).deviations() for c in candidates])
    sign_k = np.where(np.sum(np.sign(det3(m_all)), axis=1) >= 0, 1.0, -1.0)
    dev_x = np.array([r[3] for r in rels])
    b9 = b_rot.reshape(k_n, x_n, n_pairs, 9)
    bb = np.sum(b9 * b9, axis=(2, 3))                                   # (K, X)
    # only hypotheses that decode to a proper rotation: det(P) det(Q) det(B) = +1
    if not reflections and np.all(sign_k < 0):  # reflections left out and the numbers are one: score what there is
        pq_by_sign = {1.0: pq_by_sign[1.0], -1.0: pq_prior}
    pq_k = np.stack([pq_by_sign[float(v)] for v in sign_k])                # (K, P, Q)
    s_n = len(LENGTH_SCALES) if compare_t else 1
    f_n = len(TRANSLATION_FRAMES) if compare_t else 1
    dev_s = np.array([0.0, 1.0, 1.0])[:s_n]
    dev_f = np.array([0.0, 1.0, 1.0])[:f_n]
    sc = np.array(LENGTH_SCALES)[:s_n]

    rows_all, cost_all, e_all = [], [], []
    for e_i, exp in enumerate(expected):
        r9 = exp.rotation.reshape(n_pairs, 9)
        # W[k, x, (b, c), (a, d)] = sum_i R_i[b, c] B_i[a, d]; g = sum P_ab R_bc Q_cd B_ad = (P W' Q^T)
        # with W'[(a, b), (c, d)]: two small matrix products instead of a six-index sum
        w = np.einsum("nj,kxnl->kxjl", r9, b9, optimize=True).reshape(k_n * x_n, 3, 3, 3, 3)   # [kx, b, c, a, d]
        w2 = np.ascontiguousarray(np.transpose(w, (0, 3, 1, 2, 4))).reshape(k_n * x_n, 9, 9)  # [kx, (a, b), (c, d)]
        pf = remaps.reshape(n_remap, 9)
        g = (pf @ w2 @ pf.T).reshape(k_n, x_n, n_remap, n_remap)        # (K, X, P, Q)
        # 0.25 chord^2 / sigma^2 + prior, in place: chord^2 = |B|^2 + 3N - 2 g
        c1 = 0.25 / rotation_tolerance ** 2
        a_rot = g
        a_rot *= -2.0 * c1
        a_rot += (c1 * (bb + 3.0 * n_pairs)
                  + PRIOR_WEIGHT * (dev_k[:, None] + dev_x[None, :] + exp.deviations))[:, :, None, None]
        a_rot += pq_k[:, None]
        a_rot = a_rot.reshape(k_n * x_n, n_remap, n_remap)
        b_full = None
        if compare_t:
            r_e, t_e = exp.rotation, exp.translation
            local = np.einsum("nba,nb->na", r_e, t_e)                         # R^T t
            v = np.stack([t_e, local, -local])                                 # (F, N, 3)
            cmat = np.einsum("kxna,fnb->kxfab", t_rel, v, optimize=True)
            cross = np.einsum("pab,kxfab->kxfp", remaps, cmat, optimize=True)  # sum_i t_i . P v_i
            tt = np.sum(t_rel * t_rel, axis=(2, 3))                            # (K, X)
            vv = np.sum(v * v, axis=(1, 2))                                    # (F,)
            sse = (sc[None, None, :, None, None] ** 2 * tt[:, :, None, None, None]
                   - 2.0 * sc[None, None, :, None, None] * cross[:, :, None]
                   + vv[None, None, None, :, None])                            # (K, X, S, F, P)
            b_full = (0.5 * np.maximum(sse, 0.0) / translation_tolerance ** 2
                      + PRIOR_WEIGHT * (dev_s[:, None, None] + dev_f[None, :, None])).reshape(
                k_n * x_n, s_n, f_n, n_remap)
        rows, costs = _best_separable(a_rot, b_full, keep)
        rows_all.append(rows)
        cost_all.append(costs)
        e_all.append(np.full(len(costs), e_i))
    rows = np.concatenate(rows_all)
    e_idx = np.concatenate(e_all)
    order = np.argsort(np.concatenate(cost_all), kind="stable")[:keep]
    n_scored = int(len(expected) * k_n * x_n * n_remap * n_remap * s_n * f_n)

    # exact residuals of the short list, vectorised: decode from the arrays already read
    rows = rows[order]
    e_idx = e_idx[order]
    c_i, s_i, f_i, p_i, q_i = rows.T
    k_i, x_i = np.divmod(c_i, x_n)
    pm, qm = remaps[p_i], remaps[q_i]
    r_dec = np.swapaxes(pm, -1, -2)[:, None] @ b_rot[k_i, x_i] @ np.swapaxes(qm, -1, -2)[:, None]   # (M, N, 3, 3)
    t_dec = None
    if has_t_obs:
        t_dec = np.einsum("mba,mnb->mna", pm, t_rel[k_i, x_i]) * np.array(LENGTH_SCALES)[s_i][:, None, None]
        turned = np.einsum("mnab,mnb->mna", r_dec, t_dec)
        t_dec = np.where((f_i == 1)[:, None, None], turned, np.where((f_i == 2)[:, None, None], -turned, t_dec))
    exp_r = np.stack([e.rotation for e in expected])[e_idx]                              # (M, N, 3, 3)
    rr_all = angles_between(exp_r, r_dec)
    tr_all = None
    if compare_t:
        tr_all = np.sqrt(np.sum((t_dec - np.stack([e.translation for e in expected])[e_idx]) ** 2, axis=-1))
    fit = np.sum(0.5 * (rr_all / rotation_tolerance) ** 2, axis=-1)
    if tr_all is not None:
        fit += np.sum(0.5 * (tr_all / translation_tolerance) ** 2, axis=-1)
    hyps = []
    for j in range(len(rows)):
        action, direction, transposed, _ = rels[x_i[j]]
        true = _with_relation(candidates[k_i[j]].reading, action, direction)
        slip = Slip(stated, true, transposed, int(p_i[j]), int(q_i[j]), float(LENGTH_SCALES[s_i[j]]),
                    TRANSLATION_FRAMES[f_i[j]])
        dev = slip.deviations() + expected[e_idx[j]].deviations
        hyps.append(Hypothesis(slip, int(e_idx[j]), rr_all[j], None if tr_all is None else tr_all[j], r_dec[j],
                               None if t_dec is None else t_dec[j], float(fit[j] + PRIOR_WEIGHT * dev), dev,
                               int(k_i[j])))
    hyps.sort(key=lambda h: (h.cost, h.slip.order_key()))
    groups = _group(hyps, stated, candidates, limit, rotation_tolerance, translation_tolerance)
    return Ranking(tuple(groups), n_scored, stated, n_pairs, compare_t)


@lru_cache(maxsize=4096)
def _with_relation(reading: Reading, action: str, direction: str) -> Reading:
    return reading.with_fields(action=action, direction=direction)


_PROBE_SEED = 20261204


@lru_cache(maxsize=256)
def _probe_numbers(stated: Reading) -> np.ndarray:
    """Three fixed random poses written under the stated reading: the inputs that tell slips apart
    (read-only; remembered per reading)."""
    rng = np.random.default_rng(_PROBE_SEED)
    q = rng.normal(size=(3, 4))
    q /= np.linalg.norm(q, axis=1, keepdims=True)
    r = rot.matrix_of_quaternion(q)
    t = rng.normal(size=(3, 3)) if stated.has_translation else None
    out = write_numbers(stated, r, t)
    out.setflags(write=False)
    return out


def _decode_probe(slip: Slip, probe: np.ndarray, cache: dict):
    """``slip.decode(probe)``, reading the probe once per true reading (many slips share one)."""
    if slip.true not in cache:
        cache[slip.true] = read_numbers(slip.true, probe)
    return slip.decode(probe, read=cache[slip.true])


def _same_pose(a: Hypothesis, b: Hypothesis) -> bool:
    """The two slips decode the numbers to the same pose on every pair (to EQUIVALENT)."""
    if np.max(np.abs(a.rotation - b.rotation)) > EQUIVALENT:
        return False
    return a.translation is None or b.translation is None or np.max(np.abs(a.translation - b.translation)) <= EQUIVALENT


def _group(hyps: list[Hypothesis], stated: Reading, candidates: list[Candidate], limit: int,
           rotation_tolerance: float, translation_tolerance: float) -> list[Group]:
    # hypotheses whose residuals agree on every pair (to EQUIVALENT) against the same expected reading
    res = np.stack([h.rotation_residuals for h in hyps])                     # (M, N)
    close = np.max(np.abs(res[:, None] - res[None]), axis=-1) <= EQUIVALENT
    if hyps[0].translation_residuals is not None:
        tres = np.stack([h.translation_residuals for h in hyps])
        close &= np.max(np.abs(tres[:, None] - tres[None]), axis=-1) <= EQUIVALENT
    exp_i = np.array([h.expected for h in hyps])
    close &= exp_i[:, None] == exp_i[None]
    leaders: list[int] = []
    raw_groups: list[list[Hypothesis]] = []
    for j, h in enumerate(hyps):
        # equal residuals are necessary; the same decoded pose on every pair is what groups them
        for g_i in np.flatnonzero(close[leaders, j]) if leaders else ():
            if _same_pose(hyps[leaders[g_i]], h):
                raw_groups[g_i].append(h)
                break
        else:
            leaders.append(j)
            raw_groups.append([h])
    # an explanation that fits within the tolerances always ranks before one that does not: the
    # prior orders explanations the data allow, it never outvotes the tolerance
    lead_rms = np.sqrt(np.mean(res[leaders] ** 2, axis=-1))
    fits = lead_rms <= rotation_tolerance
    if hyps[0].translation_residuals is not None:
        fits &= np.sqrt(np.mean(tres[leaders] ** 2, axis=-1)) <= translation_tolerance
    raw_groups = [raw_groups[i] for i in np.argsort(~fits, kind="stable")]
    # named numbers are reordered per reading, so a random input cannot be pushed through every slip alike
    first = candidates[0].numbers
    probe_ok = all(c.numbers is first or np.array_equal(c.numbers, first) for c in candidates)
    probe = _probe_numbers(stated) if probe_ok else None
    read_cache: dict = {}
    out = []
    for g in raw_groups[:limit]:
        g = sorted(g, key=lambda h: (h.deviations, h.slip.order_key()))
        lead = g[0]
        # members claiming more than one mistake beyond the lead's say more than the numbers show
        g = [h for h in g if h.deviations <= lead.deviations + 1]
        same, separable = [], []
        if probe is not None and len(g) > 1:
            decoded = [_decode_probe(h.slip, probe, read_cache) for h in g]
            rs = np.stack([r for r, _ in decoded])                             # (G, 3, 3, 3)
            diff = angles_between(np.broadcast_to(rs[0], rs[1:].shape), rs[1:])  # (G - 1, 3)
            if decoded[0][1] is not None:
                ts = np.stack([t for _, t in decoded])
                diff = diff + np.linalg.norm(ts[1:] - ts[0], axis=-1)
            for h, d in zip(g[1:], diff):
                if np.max(d) <= 1e-9:
                    same.append(h)
                else:
                    separable.append((h, probe[int(np.argmax(d))]))
        else:
            separable = [(h, None) for h in g[1:]]  # no probe: agreement beyond this sample is unknown
        out.append(Group(lead, tuple(same), tuple(separable)))
    return out
