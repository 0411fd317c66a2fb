"""A scenario grid for the explanation engine (``posekit.analysis.diagnose`` / ``diagnose_batch``).

The grid is built here from a seeded numpy generator: every slip family (each convention
field flipped, the rotation-only transpose of matrices, axis remaps on the parent and on
the child side, a handedness flip, a millimetre length scale, the translation given in
the child's axes), alone and some in pairs, for every reading kind (quaternion, Euler
angles, 3x3 matrix, 4x4 matrix in both layouts, position + quaternion, position + Euler)
under several stated readings, on random poses and on poses within 1e-7 rad of an Euler
gimbal lock.  Numbers that follow the stated reading exactly and numbers carrying an
extra turn no slip can explain are in the grid too, and a batch grid feeds 2-50 noisy pairs.

The outside reference is scipy (``scipy.spatial.transform.Rotation``): every true pose is
drawn or built with scipy, the observed numbers of every scenario are checked to mean the
slipped pose under scipy's reading of the true convention, and every corrected output is
read back with scipy as well as with posekit and compared with the scipy truth.  Every
expected value comes from that truth or from the prior written in the engine's
documentation (``posekit/explain/slips.py`` module docstring), never from engine output.
"""

from __future__ import annotations

import dataclasses

import functools
import json
import math
import subprocess
import sys
import warnings
from dataclasses import dataclass

import numpy as np
import pytest
from scipy.spatial.transform import Rotation

import posekit as pk
from posekit.analysis import diagnose, diagnose_batch
from posekit.core.convention import CHOICES, Convention
from posekit.explain import REMAPS, Slip, sentence, stated_reading

# --------------------------------------------------------------------------------------
# remaps (common practice frame changes) and the documented prior
# --------------------------------------------------------------------------------------

REMAP = {
    "I": np.eye(3),
    "enu-ned": np.array([[0, 1, 0], [1, 0, 0], [0, 0, -1.0]]),       # ENU <-> NED, common practice
    "flu-frd": np.diag([1.0, -1.0, -1.0]),                          # FLU <-> FRD, common practice
    "optical": np.array([[0, -1, 0], [0, 0, -1], [1, 0, 0.0]]),     # FLU body -> optical, common practice
    "turn-z90": np.array([[0, -1, 0], [1, 0, 0], [0, 0, 1.0]]),     # an unnamed proper remap
    "mirror-z": np.diag([1.0, 1.0, -1.0]),                          # handedness flip: one mirrored axis
    "swap-xy": np.array([[0, 1, 0], [1, 0, 0], [0, 0, 1.0]]),       # handedness flip: axes swapped
}
NAMED = ("enu-ned", "flu-frd", "optical")  # the optical map is named both ways (its transpose too)


def remap_deviations(m: np.ndarray) -> float:
    """The documented remap prior: 0 none, 1 named, 2.5 other proper, 3 one mirrored axis, 4 other reflection."""
    if np.array_equal(m, np.eye(3)):
        return 0.0
    if any(np.array_equal(m, REMAP[n]) or np.array_equal(m, REMAP[n].T) for n in NAMED):
        return 1.0
    if np.linalg.det(m) > 0:
        return 2.5
    if np.array_equal(np.abs(m), np.eye(3)) and np.sum(np.diag(m) < 0) == 1:
        return 3.0
    return 4.0


def remap_index(m: np.ndarray) -> int:
    hits = [i for i in range(len(REMAPS)) if np.array_equal(REMAPS[i], m)]
    assert len(hits) == 1
    return hits[0]


# --------------------------------------------------------------------------------------
# scipy reference: what numbers mean under a convention, and angles between poses
# --------------------------------------------------------------------------------------

def conv_of(text: str) -> Convention:
    return Convention.parse(text) if text else Convention()


def stated_keys(text: str) -> set[str]:
    return {w.partition("=")[0] for w in text.split() if "=" in w}


def sp_rotation(nums, rkind: str, c: Convention) -> np.ndarray:
    """Active matrix of rotation numbers (direction handled by the caller), by scipy."""
    nums = np.asarray(nums, dtype=float)
    if rkind == "quaternion":
        m = Rotation.from_quat(nums, scalar_first=c.scalar == "first").as_matrix()  # scipy: Hamilton quaternion
        if c.algebra == "jpl":
            m = m.T  # the same four numbers under JPL ij = -k give the transposed matrix (Trawny & Roumeliotis 2005)
        if c.action == "passive":
            m = m.T  # passive parameters: the transpose of the active matrix
        return m
    if rkind == "euler":
        seq = c.axes_letters.upper() if c.intrinsic else c.axes_letters.lower()  # scipy: upper case = intrinsic
        m = Rotation.from_euler(seq, nums, degrees=c.unit == "degrees").as_matrix()  # scipy: from_euler
        return m.T if c.action == "passive" else m
    assert rkind == "matrix"
    m = nums.reshape(3, 3)
    return m.T if c.layout == "column-major" else m


def sp_read(nums, kind: str, c: Convention):
    """Canonical (R, t or None) of numbers under a convention: scipy for the rotation part, numpy for the rest."""
    nums = np.asarray(nums, dtype=float)
    if kind in ("quaternion", "euler", "matrix"):
        m = sp_rotation(nums, kind, c)
        return (m.T if c.direction == "child-from-parent" else m), None
    if kind == "transform":
        m = nums.reshape(4, 4)
        m = m.T if c.layout == "column-major" else m
        r, t = m[:3, :3], m[:3, 3]
    else:
        r, t = sp_rotation(nums[3:], kind.replace("position-", ""), c), nums[:3]
    if c.direction == "child-from-parent":
        r, t = r.T, -r.T @ t
    return r, t


def angle(a, b) -> float:
    """Geodesic angle (rad) between two rotation matrices, by scipy; inf when the relative map is no rotation."""
    a, b = np.asarray(a, dtype=float), np.asarray(b, dtype=float)
    rel = a.T @ b
    if np.linalg.det(rel) <= 0 or np.max(np.abs(rel @ rel.T - np.eye(3))) > 1e-6:
        return math.inf
    return float((Rotation.from_matrix(a).inv() * Rotation.from_matrix(b)).magnitude())  # scipy: magnitude


def dist(a, b) -> float:
    return float(np.linalg.norm(np.asarray(a, dtype=float) - np.asarray(b, dtype=float)))


# --------------------------------------------------------------------------------------
# the grid
# --------------------------------------------------------------------------------------

COUNT = {"quaternion": 4, "euler": 3, "matrix": 9, "transform": 16, "position-quaternion": 7, "position-euler": 6}
FIELDS = {"quaternion": ("scalar", "algebra", "action", "direction"),
          "euler": ("sequence", "axes", "unit", "action", "direction"),
          "matrix": ("layout", "direction"), "transform": ("layout", "direction")}
FIELDS["position-quaternion"] = FIELDS["quaternion"]
FIELDS["position-euler"] = FIELDS["euler"]
MATRIX_KINDS = ("matrix", "transform")
TRANSLATION_KINDS = ("transform", "position-quaternion", "position-euler")

#: Stated readings per kind: keys present are stated (the last Euler one states fields Euler angles ignore).
STATED = {
    "quaternion": ("", "scalar=last", "scalar=first algebra=hamilton", "algebra=jpl",
                   "action=passive direction=child-from-parent",
                   "scalar=last direction=child-from-parent action=passive algebra=jpl"),
    "euler": ("sequence=z-y-x axes=intrinsic unit=degrees", "sequence=x-y-z axes=extrinsic unit=radians",
              "unit=degrees action=passive", "sequence=z-x-z unit=degrees",
              "scalar=last direction=child-from-parent unit=degrees sequence=x-y-z axes=extrinsic "
              "layout=column-major action=passive algebra=jpl"),
    "matrix": ("", "layout=column-major", "direction=child-from-parent",
               "layout=row-major direction=parent-from-child"),
    "transform": ("", "layout=column-major", "direction=child-from-parent layout=row-major"),
    "position-quaternion": ("scalar=last", "", "direction=child-from-parent scalar=last algebra=jpl"),
    "position-euler": ("unit=degrees",
                       "sequence=x-y-z axes=extrinsic unit=degrees direction=child-from-parent action=passive"),
}

CHILD_CYCLE = ("optical", "flu-frd", "turn-z90")
MIRROR_CYCLE = (("mirror-z", "I"), ("I", "mirror-z"), ("I", "swap-xy"), ("swap-xy", "I"))


@dataclass(frozen=True)
class Scenario:
    sid: str
    kind: str
    stated: str
    changes: tuple = ()           # ((field, true value), ...): the numbers were written with these
    transposed: bool = False      # rotation block transposed on its own (matrix kinds)
    parent: str = "I"
    child: str = "I"
    scale: float = 1.0            # true metres per number read as metres (1e-3: written in mm)
    frame: str = "parent"         # "parent" or "child-axes"
    lock: tuple | None = None     # ("stated" | "true", sign, offset): middle Euler angle +-90 deg + offset
    extra: bool = False           # an extra 20-60 degree turn no slip explains
    seed: int = 0

    @property
    def count(self) -> int:
        return COUNT[self.kind]

    @property
    def has_t(self) -> bool:
        return self.kind in TRANSLATION_KINDS

    @property
    def stated_conv(self) -> Convention:
        return conv_of(self.stated)

    @property
    def true_conv(self) -> Convention:
        return self.stated_conv.changed(**dict(self.changes))

    @property
    def is_slip(self) -> bool:
        return bool(self.changes or self.transposed or self.parent != "I" or self.child != "I"
                    or self.scale != 1.0 or self.frame != "parent")

    def prior(self) -> float:
        """Deviations the injected slip claims, by the documented prior."""
        keys = stated_keys(self.stated)
        n = 0.0
        for f, v in self.changes:
            if f in FIELDS[self.kind] and getattr(self.stated_conv, f) != v:
                n += 2.0 if f in keys else 1.0
        n += float(self.transposed) + float(self.scale != 1.0) + float(self.frame != "parent")
        return n + remap_deviations(REMAP[self.parent]) + remap_deviations(REMAP[self.child])

    def families(self) -> set[str]:
        out = {f for f, v in self.changes if getattr(self.stated_conv, f) != v}
        for name, on in (("transposed", self.transposed), ("length_scale", self.scale != 1.0),
                         ("translation_frame", self.frame != "parent"), ("parent_remap", self.parent != "I"),
                         ("child_remap", self.child != "I")):
            if on:
                out.add(name)
        return out


def _other(field: str, value: str) -> str:
    a, b = CHOICES[field]
    return b if value == a else a


def _other_sequences(seq: str) -> tuple[str, ...]:
    letters = seq.replace("-", "")
    rev = "-".join(letters[::-1])
    if letters[0] == letters[2]:  # a proper Euler sequence: a Tait-Bryan one and another proper one
        return ("z-y-x", "x-y-x" if letters != "xyx" else "z-x-z")
    return (rev, "z-x-z")


#: Short words for scenario ids.
SHORT = {"sequence": "seq", "direction": "dir", "child-from-parent": "cfp", "parent-from-child": "pfc",
         "column-major": "col", "row-major": "row", "intrinsic": "intr", "extrinsic": "extr",
         "radians": "rad", "degrees": "deg", "algebra": "alg", "action": "act", "scalar": "sc"}


def _slug(text: str) -> str:
    if not text:
        return "nothing"
    words = []
    for w in text.split():
        k, _, v = w.partition("=")
        words.append(f"{SHORT.get(k, k)}:{SHORT.get(v, v)}")
    return ",".join(words)


def build_grid():
    rng = np.random.default_rng(20261207)
    singles, pairs, locks, clean, unexplained = [], [], [], [], []

    def seed():
        return int(rng.integers(0, 2 ** 31))

    def make(kind, stated, tag, **kw):
        return Scenario(f"{kind}|{_slug(stated)}|{tag}", kind, stated, seed=seed(), **kw)

    for kind, stated_list in STATED.items():
        for si, stated in enumerate(stated_list):
            c = conv_of(stated)
            for f in FIELDS[kind]:
                values = _other_sequences(c.sequence) if f == "sequence" else (_other(f, getattr(c, f)),)
                for v in values:
                    singles.append(make(kind, stated, f"{SHORT.get(f, f)}={SHORT.get(v, v)}", changes=((f, v),)))
            if kind in MATRIX_KINDS:
                singles.append(make(kind, stated, "transposed", transposed=True))
                p, q = MIRROR_CYCLE[si % len(MIRROR_CYCLE)]
                singles.append(make(kind, stated, f"handedness:parent={p},child={q}", parent=p, child=q))
            singles.append(make(kind, stated, "parent=enu-ned", parent="enu-ned"))
            ch = CHILD_CYCLE[si % len(CHILD_CYCLE)]
            singles.append(make(kind, stated, f"child={ch}", child=ch))
            if kind in TRANSLATION_KINDS:
                singles.append(make(kind, stated, "mm-read-as-m", scale=1e-3))
                singles.append(make(kind, stated, "t-in-child-axes", frame="child-axes"))
            clean.append(make(kind, stated, "as-stated"))
            if si < 2:
                unexplained.append(make(kind, stated, "extra-turn", extra=True))

    pair_specs = [
        ("quaternion", "scalar=last", dict(changes=(("scalar", "first"),), parent="enu-ned")),
        ("quaternion", "", dict(changes=(("algebra", "jpl"), ("scalar", "last")))),
        ("quaternion", "action=passive direction=child-from-parent",
         dict(changes=(("scalar", "last"),), child="flu-frd")),
        ("euler", "sequence=z-y-x axes=intrinsic unit=degrees",
         dict(changes=(("unit", "radians"), ("sequence", "x-y-z")))),
        ("euler", "sequence=x-y-z axes=extrinsic unit=radians",
         dict(changes=(("axes", "intrinsic"), ("direction", "child-from-parent")))),
        ("euler", "unit=degrees action=passive", dict(changes=(("sequence", "x-y-z"),), parent="enu-ned")),
        ("matrix", "layout=column-major", dict(changes=(("layout", "row-major"),), child="optical")),
        ("matrix", "", dict(changes=(("direction", "child-from-parent"),), parent="mirror-z")),
        ("matrix", "direction=child-from-parent", dict(transposed=True, parent="enu-ned")),
        ("matrix", "", dict(transposed=True, child="turn-z90")),
        ("transform", "", dict(changes=(("layout", "column-major"),), scale=1e-3)),
        ("transform", "layout=column-major", dict(transposed=True, frame="child-axes")),
        ("transform", "direction=child-from-parent layout=row-major",
         dict(changes=(("direction", "parent-from-child"),), parent="enu-ned")),
        ("transform", "", dict(scale=1e-3, frame="child-axes")),
        ("transform", "", dict(parent="enu-ned", child="mirror-z")),
        ("transform", "", dict(transposed=True, child="optical")),
        ("transform", "layout=column-major", dict(transposed=True, parent="enu-ned")),
        ("transform", "direction=child-from-parent", dict(transposed=True, scale=1e-3)),
        ("position-quaternion", "scalar=last", dict(changes=(("scalar", "first"),), scale=1e-3)),
        ("position-quaternion", "", dict(changes=(("direction", "child-from-parent"),), child="flu-frd")),
        ("position-euler", "unit=degrees", dict(changes=(("unit", "radians"),), frame="child-axes")),
        ("position-euler", "unit=degrees", dict(changes=(("sequence", "x-y-z"),), scale=1e-3)),
    ]
    for kind, stated, kw in pair_specs:
        s = make(kind, stated, "pair", **kw)
        tag = "+".join(sorted(s.families()))
        pairs.append(Scenario(s.sid.replace("|pair", f"|pair:{tag}"), **{k: v for k, v in s.__dict__.items()
                                                                          if k != "sid"}))

    lock_specs = [("euler", "sequence=z-y-x axes=intrinsic unit=degrees"),
                  ("euler", "sequence=x-y-z axes=extrinsic unit=radians"),
                  ("position-euler", "unit=degrees")]
    for kind, stated in lock_specs:
        c = conv_of(stated)
        rev = _other_sequences(c.sequence)[0]
        clean.append(make(kind, stated, "as-stated@lock(stated,+,+)", lock=("stated", 1.0, 1e-7)))
        for tag, kw in (("unit", dict(changes=(("unit", _other("unit", c.unit)),), lock=("true", -1.0, -1e-7))),
                        ("seq@true", dict(changes=(("sequence", rev),), lock=("true", 1.0, -1e-7))),
                        ("seq@stated", dict(changes=(("sequence", rev),), lock=("stated", -1.0, 1e-7))),
                        ("enu-ned", dict(parent="enu-ned", lock=("stated", 1.0, 1e-7))),
                        ("action", dict(changes=(("action", _other("action", c.action)),),
                                        lock=("stated", -1.0, -1e-7)))):
            locks.append(make(kind, stated, f"lock:{tag}", **kw))
    return singles, pairs, locks, clean, unexplained


SINGLES, PAIRS, LOCKS, CLEAN, UNEXPLAINED = build_grid()
SLIPS = SINGLES + PAIRS + LOCKS
ALL = SLIPS + CLEAN + UNEXPLAINED
BY_ID = {s.sid: s for s in ALL}
assert len(BY_ID) == len(ALL), "scenario ids must be unique"


# --------------------------------------------------------------------------------------
# building one scenario: truth (scipy), slipped pose (numpy), numbers (posekit / numpy writers)
# --------------------------------------------------------------------------------------

def _numpy_matrix_numbers(kind: str, c: Convention, r: np.ndarray, t) -> np.ndarray:
    """Matrix-kind numbers written with numpy (a reflected block has no posekit writer, by design)."""
    if kind == "matrix":
        m = r.T if c.direction == "child-from-parent" else r
        return (m.T if c.layout == "column-major" else m).reshape(9)
    m = np.eye(4)
    if c.direction == "child-from-parent":  # r is orthogonal, so its inverse is its transpose
        m[:3, :3], m[:3, 3] = r.T, -r.T @ t
    else:
        m[:3, :3], m[:3, 3] = r, t
    return (m.T if c.layout == "column-major" else m).reshape(16)


def _write(kind: str, c: Convention, r: np.ndarray, t) -> np.ndarray:
    if kind in MATRIX_KINDS and np.linalg.det(r) < 0:
        return _numpy_matrix_numbers(kind, c, r, t)
    if kind == "matrix":
        return pk.write_rotation(r, "matrix", c, flat=True)
    if kind in ("quaternion", "euler"):
        return pk.write_rotation(r, kind, c)
    tk = "matrix" if kind == "transform" else kind
    return pk.write_transform(pk.make_transform(r, t), tk, c, flat=kind == "transform")


def forward(s: Scenario, r: np.ndarray, t):
    """The slip's forward model as documented in posekit/explain/slips.py, in numpy: translation frame, length
    scale, remaps ``(P R Q, P t)``, then the rotation block transposed on its own (translation untouched)."""
    t1 = None if t is None else (r.T @ t if s.frame == "child-axes" else t)
    t2 = None if t1 is None else t1 / s.scale
    p, q = REMAP[s.parent], REMAP[s.child]
    r2 = p @ r @ q
    return (r2.T if s.transposed else r2), None if t2 is None else p @ t2


@dataclass(frozen=True, eq=False)
class Built:
    rotation: np.ndarray         # the true canonical pose (scipy)
    translation: np.ndarray | None
    slipped_rotation: np.ndarray  # the pose the numbers denote under the true reading
    slipped_translation: np.ndarray | None
    observed: np.ndarray


def _truth(s: Scenario, rng):
    if s.lock is not None:
        which, sign, offset = s.lock
        c = s.stated_conv if which == "stated" else s.true_conv
        seq = c.axes_letters.upper() if c.intrinsic else c.axes_letters.lower()  # scipy: upper case = intrinsic
        a, b = rng.uniform(-math.pi, math.pi, size=2)
        r = Rotation.from_euler(seq, [a, sign * math.pi / 2 + offset, b]).as_matrix()  # scipy: from_euler
    else:
        r = Rotation.random(random_state=s.seed).as_matrix()  # scipy: Rotation.random
    t = rng.normal(size=3) if s.has_t else None
    return r, t


@functools.lru_cache(maxsize=None)
def built(sid: str) -> Built:
    s = BY_ID[sid]
    rng = np.random.default_rng(s.seed)
    r, t = _truth(s, rng)
    if s.extra:  # observed = truth turned by 20-60 degrees about a random axis, then written as stated
        axis = rng.normal(size=3)
        axis /= np.linalg.norm(axis)
        turn = Rotation.from_rotvec(axis * math.radians(rng.uniform(20, 60))).as_matrix()  # scipy: from_rotvec
        r_obs, t_obs = turn @ r, t
    else:
        r_obs, t_obs = forward(s, r, t)
    nums = _write(s.kind, s.true_conv, r_obs, t_obs)
    return Built(r, t, r_obs, t_obs, np.asarray(nums, dtype=float))


@functools.lru_cache(maxsize=None)
def run(sid: str):
    s, b = BY_ID[sid], built(sid)
    if s.has_t:
        expected, kw = pk.Pose(pk.make_transform(b.rotation, b.translation)), {}
    else:
        expected, kw = b.rotation, {"expected_kind": "matrix"}
    return diagnose(expected, b.observed, assumed=s.stated or None, assumed_kind=s.kind, **kw)


def injected_slip(s: Scenario) -> Slip:
    stated = stated_reading(s.count, s.kind, s.stated or None)
    true = stated.with_fields(**dict(s.changes))
    return Slip(stated, true, s.transposed, remap_index(REMAP[s.parent]), remap_index(REMAP[s.child]), s.scale,
                "child-axes" if s.frame == "child-axes" else "parent")


def _signature(slip: Slip):
    return (frozenset(slip.field_changes()), slip.kind_changed, slip.order_changed, slip.transposed,
            slip.parent_remap, slip.child_remap, slip.length_scale, slip.translation_frame)


def read_back_posekit(nums, s: Scenario):
    c = s.stated or None
    if s.kind in ("quaternion", "euler", "matrix"):
        return pk.read_rotation(np.asarray(nums), s.kind, c), None
    m = pk.read_transform(np.asarray(nums), "matrix" if s.kind == "transform" else s.kind, c)
    return m[..., :3, :3], m[..., :3, 3]


def ids(scenarios):
    return [s.sid for s in scenarios]


# --------------------------------------------------------------------------------------
# the scenarios themselves (scipy checks the generator, not the engine)
# --------------------------------------------------------------------------------------

@pytest.mark.parametrize("sid", ids(ALL))
def test_observed_numbers_mean_the_slipped_pose(sid):
    s, b = BY_ID[sid], built(sid)
    assert b.observed.shape == (s.count,)
    r, t = sp_read(b.observed, s.kind, s.true_conv)  # scipy reading under the true (slipped) convention
    if np.linalg.det(b.slipped_rotation) > 0:
        assert angle(r, b.slipped_rotation) < 1e-9
    else:
        assert np.max(np.abs(r - b.slipped_rotation)) < 1e-12
    if s.has_t:
        assert dist(t, b.slipped_translation) < 1e-9
    if s.lock is not None:  # the true pose really sits 1e-7 rad from the lock of the named sequence (scipy)
        which, sign, offset = s.lock
        c = s.stated_conv if which == "stated" else s.true_conv
        seq = c.axes_letters.upper() if c.intrinsic else c.axes_letters.lower()
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")  # scipy may warn about the lock it is asked to read near
            mid = Rotation.from_matrix(b.rotation).as_euler(seq)[1]  # scipy: as_euler
        assert abs(abs(mid) - math.pi / 2) < 1e-6


@pytest.mark.parametrize("sid", ids(SLIPS))
def test_documented_prior_matches_slip_deviations(sid):
    s = BY_ID[sid]
    assert injected_slip(s).deviations() == pytest.approx(s.prior(), abs=1e-12)


# --------------------------------------------------------------------------------------
# 1. the injected slip (or one identical to it) ranks first
# --------------------------------------------------------------------------------------

@pytest.mark.parametrize("sid", ids(SLIPS))
def test_decode_runs_the_documented_forward_model_backwards(sid):
    """The injected slip as a posekit Slip undoes the numbers into the scipy truth (slips.py forward model)."""
    s, b = BY_ID[sid], built(sid)
    r, t = injected_slip(s).decode(b.observed)
    assert angle(r, b.rotation) < 1e-9
    if s.has_t:
        assert dist(t, b.translation) < 1e-9


@pytest.mark.parametrize("sid", ids(SLIPS))
def test_injected_slip_ranks_first(sid):
    s, b, d = BY_ID[sid], built(sid), run(sid)
    best = d.best
    assert d.explained, d.verdict
    assert best.rotation_residual < 1e-6, best.sentence
    if s.has_t:
        assert best.translation_residual is not None and best.translation_residual < 1e-6, best.sentence
    else:
        assert best.translation_residual is None
    assert best.deviations <= s.prior() + 1e-9, (best.sentence, best.deviations, s.prior())
    # the lead slip undoes the numbers into the scipy truth
    r, t = best.slip.decode(b.observed)
    assert angle(r, b.rotation) < 1e-9, best.sentence
    if s.has_t:
        assert dist(t, b.translation) < 1e-9, best.sentence


@pytest.mark.parametrize("sid", ids(SLIPS))
def test_injected_slip_is_named_or_listed(sid):
    """The lead is the injected slip, or the injected slip is listed as the same mistake written another way
    (the engine lists those within one deviation of the lead)."""
    s, d = BY_ID[sid], run(sid)
    best, inj = d.best, injected_slip(s)
    if _signature(best.slip) == _signature(inj):
        return
    if s.prior() > best.deviations + 1 + 1e-9:
        pytest.skip("the injected slip is more than one deviation dearer than the lead; only those within one "
                    "are listed")
    listed = {best.sentence, *best.equivalents, *(x for x, _ in best.separable)}
    assert sentence(inj) in listed, (best.sentence, sentence(inj), listed)


# --------------------------------------------------------------------------------------
# 2. corrected numbers read back to the truth, with posekit and with scipy
# --------------------------------------------------------------------------------------

@pytest.mark.parametrize("sid", ids(SLIPS))
def test_corrected_numbers_read_back_to_truth(sid):
    s, b, d = BY_ID[sid], built(sid), run(sid)
    best = d.best
    nums = np.asarray(best.corrected_numbers, dtype=float)
    assert nums.shape == (s.count,)
    assert angle(best.corrected_rotation, b.rotation) < 1e-9
    r, t = read_back_posekit(nums, s)
    assert angle(r, b.rotation) < 1e-9
    r2, t2 = sp_read(nums, s.kind, s.stated_conv)  # scipy reading under the stated convention
    assert angle(r2, b.rotation) < 1e-9
    if s.has_t:
        assert dist(best.corrected_translation, b.translation) < 1e-9
        assert dist(t, b.translation) < 1e-9
        assert dist(t2, b.translation) < 1e-9
    if s.kind == "quaternion" and s.stated_conv.action == "active" and s.stated_conv.algebra == "hamilton" \
            and s.stated_conv.direction == "parent-from-child":
        # the plain case straight from scipy: the numbers are the truth's quaternion, up to sign
        q = Rotation.from_matrix(b.rotation).as_quat(scalar_first=s.stated_conv.scalar == "first")  # scipy
        assert min(dist(nums, q), dist(nums, -q)) < 1e-9


# --------------------------------------------------------------------------------------
# 3. numbers that follow the stated reading: no deviation, no claimed error
# --------------------------------------------------------------------------------------

@pytest.mark.parametrize("sid", ids(CLEAN))
def test_numbers_as_stated_claim_no_error(sid):
    s, b, d = BY_ID[sid], built(sid), run(sid)
    best = d.best
    assert best.deviations == 0
    assert d.explained
    assert best.slip.families() == ()
    assert "no convention error" in best.sentence.lower()
    assert "no convention error" in d.verdict.lower()
    assert best.rotation_residual < 1e-9
    r, _ = read_back_posekit(np.asarray(best.corrected_numbers), s)
    assert angle(r, b.rotation) < 1e-9


# --------------------------------------------------------------------------------------
# 4. a residual no slip explains never reads as "no error"
# --------------------------------------------------------------------------------------

@pytest.mark.parametrize("sid", ids(UNEXPLAINED))
def test_unexplained_turn_is_never_called_no_error(sid):
    d = run(sid)
    assert not d.explained
    assert "no convention error" not in d.verdict.lower()
    assert "No single slip" in d.verdict
    assert d.best.rotation_residual > math.radians(0.5)
    for e in d.explanations:
        assert "no convention error" not in e.sentence.lower(), e.sentence


# --------------------------------------------------------------------------------------
# 5. the fix snippet runs and gives the corrected numbers (one scenario in four)
# --------------------------------------------------------------------------------------

CODE_SAMPLE = [s for i, s in enumerate(SLIPS + CLEAN) if i % 4 == 0]


@pytest.mark.parametrize("sid", ids(CODE_SAMPLE))
def test_fix_code_runs(sid):
    s, d = BY_ID[sid], run(sid)
    ns: dict = {}
    exec(compile(d.best.code, f"<fix code {sid}>", "exec"), ns)  # noqa: S102 - the engine's own snippet
    corrected = np.asarray(ns["corrected"], dtype=float)
    assert corrected.shape == (s.count,)
    assert np.max(np.abs(corrected - np.asarray(d.best.corrected_numbers))) < 1e-9
    assert angle(ns["R"], d.best.corrected_rotation) < 1e-9
    if s.has_t:
        assert dist(ns["t"], d.best.corrected_translation) < 1e-9


# --------------------------------------------------------------------------------------
# 6. the command line gives the same corrected numbers (a few scenarios, run in parallel)
# --------------------------------------------------------------------------------------

def _cli_sample():
    out, seen = [], set()
    for s in SINGLES + PAIRS:
        if s.kind not in seen and (s.parent != "I" or s.changes):
            seen.add(s.kind)
            out.append(s)
    return out + UNEXPLAINED[:1]  # one kind each, plus numbers no slip explains (exit status 1)


CLI_SAMPLE = _cli_sample()


def _numbers_text(values) -> str:
    return " ".join(repr(float(v)) for v in np.ravel(values))


@pytest.fixture(scope="module")
def cli_results():
    procs = {}
    for s in CLI_SAMPLE:
        b = built(s.sid)
        if s.has_t:
            expected = _numbers_text(pk.make_transform(b.rotation, b.translation))  # 16 numbers, row-major
        else:
            expected = _numbers_text(b.rotation)                                     # 9 numbers, row-major
        cmd = [sys.executable, "-m", "posekit.cli", "diagnose", "--expected", expected,
               "--observed", _numbers_text(b.observed), "--assumed-kind", s.kind, "--reflections", "--json"]
        if s.stated:
            cmd += ["--assumed", s.stated]
        procs[s.sid] = subprocess.Popen(cmd, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    out = {}
    for sid, p in procs.items():
        stdout, stderr = p.communicate(timeout=120)
        out[sid] = (p.returncode, stdout, stderr)
    return out


@pytest.mark.parametrize("sid", ids(CLI_SAMPLE))
def test_cli_matches_api(sid, cli_results):
    code, stdout, stderr = cli_results[sid]
    d = run(sid)
    assert code == (0 if d.explained else 1), stderr  # the CLI's documented exit status: 1 when unexplained
    assert d.explained == BY_ID[sid].is_slip
    data = json.loads(stdout)
    first = data["explanations"][0]
    assert data["explained"] is d.explained
    assert first["sentence"] == d.best.sentence
    assert np.max(np.abs(np.asarray(first["corrected_numbers"]) - np.asarray(d.best.corrected_numbers))) < 1e-9


# --------------------------------------------------------------------------------------
# 7. batches of noisy pairs
# --------------------------------------------------------------------------------------

BATCH_SPECS = [
    ("quaternion", "", dict(changes=(("scalar", "last"),))),
    ("matrix", "layout=column-major", dict(parent="enu-ned")),
    ("transform", "", dict(scale=1e-3, frame="child-axes")),
    ("transform", "layout=column-major", dict(transposed=True)),
    ("position-euler", "unit=degrees", dict(changes=(("sequence", "x-y-z"), ("axes", "extrinsic")))),
    ("position-quaternion", "scalar=last", dict(changes=(("algebra", "jpl"),))),
    ("euler", "", dict(changes=(("unit", "degrees"), ("direction", "child-from-parent")))),
    ("matrix", "", dict(child="mirror-z")),
    ("transform", "direction=child-from-parent", dict(child="optical")),
    ("transform", "direction=child-from-parent", dict(transposed=True)),
    ("transform", "", dict(transposed=True, parent="enu-ned")),
]
BATCH = []
_brng = np.random.default_rng(20261208)
for _kind, _stated, _kw in BATCH_SPECS:
    _n = int(_brng.integers(2, 51))
    _s = Scenario("", _kind, _stated, seed=int(_brng.integers(0, 2 ** 31)), **_kw)
    _tag = "+".join(sorted(_s.families()))
    BATCH.append((Scenario(f"batch|{_kind}|{_slug(_stated)}|{_tag}|N={_n}", _kind, _stated,
                           seed=_s.seed, **_kw), _n))


@functools.lru_cache(maxsize=None)
def run_batch(i: int):
    s, n = BATCH[i]
    rng = np.random.default_rng(s.seed)
    truth = Rotation.random(n, random_state=s.seed).as_matrix()               # scipy: Rotation.random
    t = rng.normal(size=(n, 3)) if s.has_t else None
    noise = Rotation.from_rotvec(rng.normal(size=(n, 3)) * 1e-4).as_matrix()  # scipy: ~1e-4 rad per pair
    r_noisy = truth @ noise
    t_noisy = None if t is None else t + rng.normal(size=(n, 3)) * 1e-5
    slipped = [forward(s, r_noisy[k], None if t_noisy is None else t_noisy[k]) for k in range(n)]
    observed = np.array([_write(s.kind, s.true_conv, r2, t2) for r2, t2 in slipped])
    for k in range(n):  # scipy: the rows mean the slipped noisy poses under the true reading
        rr, tt = sp_read(observed[k], s.kind, s.true_conv)
        assert np.max(np.abs(rr - slipped[k][0])) < 1e-9
        if s.has_t:
            assert dist(tt, slipped[k][1]) < 1e-9
    expected = pk.make_transform(truth, t) if s.has_t else truth
    d = diagnose_batch(expected, observed, assumed=s.stated or None, assumed_kind=s.kind)
    return s, truth, t, observed, d


@pytest.mark.parametrize("i", range(len(BATCH)), ids=[s.sid for s, _ in BATCH])
def test_batch_names_the_injected_slip(i):
    s, truth, t, observed, d = run_batch(i)
    best = d.best
    assert d.explained and d.consistent, d.verdict
    assert best.deviations <= s.prior() + 1e-9
    r, tt = best.slip.decode(observed)
    for k in range(len(truth)):
        assert angle(r[k], truth[k]) < 1e-3
        if s.has_t:
            assert dist(tt[k], t[k]) < 1e-3
    inj = injected_slip(s)
    if "unit" not in inj.stated.stated and inj.stated.rotation_kind in ("euler", "rotation-vector"):
        # with no unit stated the tool reads typed angles in degrees (one default everywhere): the slip
        # to name is the one from that reading
        inj = dataclasses.replace(inj, stated=inj.stated.with_fields(unit="degrees"))
    if _signature(best.slip) != _signature(inj):
        listed = {best.sentence, *best.equivalents, *(x for x, _ in best.separable)}
        assert sentence(inj) in listed, (best.sentence, sentence(inj), listed)


@pytest.mark.parametrize("i", range(len(BATCH)), ids=[s.sid for s, _ in BATCH])
def test_batch_fix_code_reads_back_to_truth(i):
    s, truth, t, observed, d = run_batch(i)
    ns = {"logged_numbers": observed.copy()}
    exec(compile(d.best.code, f"<batch fix code {s.sid}>", "exec"), ns)  # noqa: S102 - the engine's own snippet
    corrected = np.asarray(ns["corrected"], dtype=float)
    assert corrected.shape == observed.shape
    assert np.max(np.abs(corrected - np.asarray(d.best.corrected_numbers))) < 1e-9
    conv = s.stated_conv
    if not s.stated and "unit" in FIELDS[s.kind]:  # nothing stated: the tool's reading has typed angles in degrees
        conv = conv.changed(unit="degrees")
    r, tt = read_back_posekit(corrected, dataclasses.replace(s, stated=conv.to_text()) if conv != s.stated_conv
                              else s)
    for k in range(len(truth)):
        assert angle(r[k], truth[k]) < 1e-3
        r2, t2 = sp_read(corrected[k], s.kind, conv)  # scipy reading under the reading the tool wrote in
        assert angle(r2, truth[k]) < 1e-3
        if s.has_t:
            assert dist(tt[k], t[k]) < 1e-3
            assert dist(t2, t[k]) < 1e-3
