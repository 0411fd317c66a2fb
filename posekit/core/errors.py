"""One typed error hierarchy for every bad input posekit can meet.

Every message says three things: what was wrong, the value (or a short summary of
it) that was seen, and what would have been accepted.  Callers catch
:class:`PoseInputError` for "the numbers or words you gave me are not usable";
each subclass narrows the reason.

All classes also derive from :class:`ValueError` (or :class:`TypeError` for
wrong Python types), so code that already catches the builtin errors keeps
working.
"""

from __future__ import annotations

__all__ = [
    "PoseInputError",
    "WrongTypeError",
    "WrongShapeError",
    "NotFiniteError",
    "ZeroQuaternionError",
    "NotUnitQuaternionError",
    "NotOrthonormalError",
    "ReflectionError",
    "ConventionError",
    "ConventionTextError",
]


class PoseInputError(ValueError):
    """Base class: the input cannot be used as given.  Nothing was repaired."""


class WrongTypeError(PoseInputError, TypeError):
    """The input is not numbers at all (a string, None, a dict, a ragged list...)."""


class WrongShapeError(PoseInputError):
    """The numbers are there but their shape does not fit what was asked for."""


class NotFiniteError(PoseInputError):
    """The input holds NaN or infinity."""


class ZeroQuaternionError(PoseInputError):
    """A quaternion with (near) zero length: it names no rotation."""


class NotUnitQuaternionError(PoseInputError):
    """A quaternion whose length is off 1 by more than the stated tolerance."""


class NotOrthonormalError(PoseInputError):
    """A 3x3 block whose columns are not orthonormal within tolerance."""


class ReflectionError(NotOrthonormalError):
    """An orthonormal matrix with determinant -1: a mirror, i.e. a handedness flip."""


class ConventionError(PoseInputError):
    """A convention field was given a value posekit does not know."""


class ConventionTextError(ConventionError):
    """The text form of a convention could not be read; says which word failed."""


def summarise(value, limit: int = 80) -> str:
    """A short, single-line repr of ``value`` for error messages."""
    try:
        import numpy as np

        if isinstance(value, np.ndarray):
            text = f"array of shape {value.shape}, dtype {value.dtype}"
            if value.size <= 16:
                text += ": " + np.array2string(value, precision=6, separator=", ").replace("\n", "")
            return text[:limit] + ("..." if len(text) > limit else "")
    except Exception:  # pragma: no cover - numpy always present
        pass
    text = repr(value).replace("\n", " ")
    return text[:limit] + ("..." if len(text) > limit else "")
