"""The frames an Euler sequence passes through, one elementary turn at a time.

Whatever the convention, the canonical rotation read from Euler angles is a product
of three elementary rotations.  :func:`euler_steps` returns the frame after each of
them, in the order the turns physically happen, so a viewer can show how intrinsic
and extrinsic sequences differ:

- intrinsic (a, b, c) about (p, q, r): ``Rp(a)``, ``Rp(a) Rq(b)``, ``Rp(a) Rq(b) Rr(c)``
  (each turn about an axis as already moved);
- extrinsic (a, b, c) about fixed (p, q, r): ``Rp(a)``, ``Rq(b) Rp(a)``,
  ``Rr(c) Rq(b) Rp(a)`` (each turn about a fixed parent axis).

A passive or child-from-parent reading transposes the product; the transposed
product is again three elementary turns (reversed order, negated angles), and
those are the steps returned.  Intrinsic/extrinsic formulas: Craig, Introduction to
Robotics, 3rd ed., §2.8 (from memory).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .checks import as_numbers
from .reading import as_convention
from .rotation import elementary_matrix

__all__ = ["EulerSteps", "euler_steps"]


@dataclass(frozen=True)
class EulerSteps:
    """``frames (..., 4, 3, 3)``: identity then the frame after turns 1, 2 and 3.

    ``turns`` lists ``(axis letter, angle in radians as applied, about moving axes?)``
    per step for a single input; ``words`` says each step in plain English.
    """

    frames: np.ndarray
    axes: tuple[str, str, str]
    signs: tuple[int, int, int]
    order: tuple[int, int, int]
    moving: bool
    words: tuple[str, str, str]


def euler_steps(angles, convention=None) -> EulerSteps:
    """Frames after each elementary turn: ``angles (..., 3)`` -> ``frames (..., 4, 3, 3)``.

    The last frame equals ``read_rotation(angles, "euler", convention)``.

    >>> s = euler_steps([90, 0, 0], "unit=degrees")
    >>> np.round(s.frames[1] @ [1, 0, 0], 12).tolist()
    [0.0, 1.0, 0.0]
    """
    conv = as_convention(convention)
    a = as_numbers(angles, "Euler angles", (3,)) * (np.pi / 180.0 if conv.degrees else 1.0)
    letters = conv.axes_letters
    flips = (conv.action == "passive") + (conv.direction == "child-from-parent")
    moving = conv.intrinsic
    order = (0, 1, 2)
    sign = 1
    if flips % 2:
        # (Rp Rq Rr)^T = Rr(-c) Rq(-b) Rp(-a): reversed order, negated, same kind of axes
        order = (2, 1, 0)
        sign = -1
    axes = tuple(letters[i] for i in order)
    frames = np.empty(a.shape[:-1] + (4, 3, 3))
    frames[..., 0, :, :] = np.eye(3)
    current = np.broadcast_to(np.eye(3), a.shape[:-1] + (3, 3))
    words = []
    for step, i in enumerate(order):
        e = elementary_matrix(letters[i], sign * a[..., i])
        current = current @ e if moving else e @ current
        frames[..., step + 1, :, :] = current
        where = f"the {'moved' if moving else 'fixed'} {letters[i]} axis"
        words.append(f"turn {step + 1}: {'minus ' if sign < 0 else ''}angle {i + 1} about {where}")
    return EulerSteps(frames, axes, (sign,) * 3, order, moving, tuple(words))
