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
    "plural",
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
    "InputTooLargeError",
    "ConventionTextTooLongError",
    "summarise",
    "excerpt",
    "odd_characters",
    "isolate_controls",
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


class InputTooLargeError(PoseInputError):
    """More bytes or characters than the documented limit; nothing past the limit was read."""


class ConventionTextTooLongError(ConventionTextError, InputTooLargeError):
    """Convention text longer than its limit (caught as either of its two parents)."""


def plural(n: int, noun: str, many: str | None = None) -> str:
    """``n`` and the noun, plural unless n is 1: ``plural(1, "pair")`` -> '1 pair', ``plural(2, "pair")`` -> '2 pairs'.

    >>> plural(1, "other explanation"), plural(3, "line"), plural(2, "key", "keys")
    ('1 other explanation', '3 lines', '2 keys')
    """
    return f"{n} {noun if n == 1 else (many or noun + 's')}"


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


#: Characters that reorder or hide text when shown (Unicode bidirectional controls,
#: zero-width marks, the byte-order mark): never shown raw in a message or report.
_BIDI = {0x202A, 0x202B, 0x202C, 0x202D, 0x202E, 0x2066, 0x2067, 0x2068, 0x2069, 0x200E, 0x200F, 0x061C}
_INVISIBLE = {0x200B, 0x200C, 0x200D, 0x2060, 0xFEFF, 0x00AD}


def excerpt(text: str, limit: int = 60) -> str:
    """A short, single-line, safe quotation of user text for a message.

    Long text is cut to its first ``limit`` characters with the total length said;
    control, bidirectional and invisible characters are shown as ``<U+XXXX>``.

    >>> excerpt("x" * 100, 10)
    "'xxxxxxxxxx'... (100 characters)"
    >>> excerpt("a\u202eb")
    "'a<U+202E>b'"
    """
    if not isinstance(text, str):
        return summarise(text, limit)
    head = isolate_controls(text[:limit])
    quoted = "'" + head.replace("'", "\\'") + "'"
    return quoted + (f"... ({len(text)} characters)" if len(text) > limit else "")


def isolate_controls(text: str) -> str:
    """Replace control, bidirectional-override and invisible characters by ``<U+XXXX>``.

    Newlines and tabs become spaces.  Used for every piece of user text that goes into
    a message, so what a reader sees is what was typed, in the order it was typed.

    >>> isolate_controls("left\u202eright")
    'left<U+202E>right'
    """
    out = []
    for ch in text:
        code = ord(ch)
        if ch in "\n\t\r":
            out.append(" ")
        elif code < 32 or code == 127 or code in _BIDI or code in _INVISIBLE or 0xD800 <= code <= 0xDFFF \
                or 0x80 <= code < 0xA0:
            out.append(f"<U+{code:04X}>")
        else:
            out.append(ch)
    return "".join(out)


def odd_characters(text: str, allowed: str = "") -> list[str]:
    """Characters outside printable ASCII (and ``allowed``), each named with its code point.

    Used where only ASCII is meaningful (convention text, keys, units) so a message can
    say *which* character was not what it looks like (a Cyrillic ``е`` looks like ``e``).

    >>> odd_characters("z\u0443x")
    ["'у' U+0443 CYRILLIC SMALL LETTER U at position 1"]
    """
    import unicodedata

    found = []
    for i, ch in enumerate(text):
        if (32 <= ord(ch) < 127) or ch in allowed or ch in "\n\t\r":
            continue
        name = unicodedata.name(ch, "unnamed character")
        shown = ch if ch.isprintable() and ord(ch) not in _BIDI | _INVISIBLE else ""
        found.append((f"{shown!r} " if shown else "") + f"U+{ord(ch):04X} {name} at position {i}")
        if len(found) >= 5:
            break
    return found


class BadToleranceError(PoseInputError):
    """A tolerance that is not a finite number within the accepted range (> 0)."""


class ToleranceTypeError(BadToleranceError, WrongTypeError):
    """A tolerance given as something other than a real number (text, a boolean, None, a list...)."""


class BadCountError(PoseInputError):
    """A count (such as ``limit``) that is not a whole number >= 1."""


class CountTypeError(BadCountError, WrongTypeError):
    """A count given as something other than a whole number (text, a boolean, a float...)."""


class MagnitudeError(PoseInputError):
    """Finite numbers too large to use: a result would overflow float64, or neighbouring
    float64 numbers are further apart than the precision asked for (an angle of 1e17
    degrees cannot be read to within a degree)."""


class MaskedEntriesError(PoseInputError):
    """A numpy masked array with masked entries: posekit does not guess what they stand for."""


class BroadcastError(WrongShapeError):
    """Batch shapes of two or more inputs that do not broadcast together (numpy's rules)."""


__all__ += ["BadToleranceError", "ToleranceTypeError", "BadCountError", "CountTypeError", "MagnitudeError",
            "MaskedEntriesError", "BroadcastError"]
