"""Each widget's saved settings: field kinds, one field checker, and a registry.

A state file (:mod:`posekit.io.state`) stores the settings of the widget that wrote it
as a flat JSON object.  Which fields a widget has, and what each may hold, is declared
by the widget itself, next to its code: a small frozen dataclass per widget (for example
``ExplorerSettings`` in ``posekit/widgets/explorer.py``), subclassing
:class:`WidgetSettings`, whose fields say their kind with :func:`setting`::

    @register_settings
    @dataclass(frozen=True)
    class PlanarSettings(WidgetSettings):
        kind: ClassVar[str] = "planar"
        x: float = setting(Float())
        unit: str = setting(Choice("degrees", "radians"))

Field kinds: :class:`Floats` ``(n)``, :class:`Float`, :class:`Bool`, :class:`Choice`,
:class:`ConventionText`, :class:`Text`, :class:`Texts` and :class:`IntRange`.  One checker
(:meth:`WidgetSettings.from_mapping`) refuses unknown and missing keys and checks every
field by its kind, raising :class:`StateFileError` with the path ``settings.<field>``.

**Why a registry.**  posekit's layers import only downwards: ``io`` cannot import
``widgets``.  So each widget module registers its class here when it is imported
(:func:`register_settings`), and :mod:`posekit.io.state` asks :func:`settings_class` for
the class of a state's widget kind.  When ``posekit.widgets`` has been imported (it is,
whenever a widget exists to be saved or rebuilt), a state's settings are checked field by
field with the widget's own class; when it has not, they are checked generically by
:func:`check_generic` (a flat object of JSON scalars and flat lists, finite numbers,
bounded text), and every widget's ``from_state`` checks them again with its own class
before it builds anything.  The JSON written is the same either way, so state files
written before this registry existed still load.

Nothing is repaired: a value is either accepted as it is (lists become tuples,
convention text is written in its canonical form) or refused with a typed error.
"""

from __future__ import annotations

import dataclasses
import math
import re
import unicodedata
from typing import Any, ClassVar, Mapping

import numpy as np

from ..core.convention import Convention
from ..core.errors import ConventionError, PoseInputError, excerpt, isolate_controls, odd_characters
from .limits import NAME_LIMIT, PASTE_LIMIT

__all__ = [
    "MAX_ITEMS", "MAX_TEXT", "MAX_KEYS", "StateFileError", "SettingsDeclarationError",
    "FieldKind", "Floats", "Float", "Bool", "Choice", "ConventionText", "Text", "Texts", "IntRange",
    "setting", "WidgetSettings", "NoWidgetSettings", "register_settings", "settings_class", "registered_kinds",
    "check_generic", "check_keys", "check_number", "check_text", "check_name", "check_convention", "shown", "fail",
]

#: Most entries in one list of a state (poses, edges, a list of texts).
MAX_ITEMS = 10_000
#: Most characters in free text (notes, a summary, text a widget keeps).
MAX_TEXT = 20_000
#: Most keys in one settings object checked generically.
MAX_KEYS = 64
#: Largest magnitude of a whole number kept as an integer in generic settings (2**53: exact in float64).
_MAX_GENERIC_INT = 2 ** 53


class StateFileError(PoseInputError):
    """A state file (or state text, or a widget's settings) is malformed, tampered with, or unusable.

    ``path`` names the offending entry (``"edges[2].numbers"``, ``"settings.angles[0]"``),
    or is None when the whole text is at fault; the message names it too.
    """

    def __init__(self, message: str, path: str | None = None):
        super().__init__(message)
        self.path = path


class SettingsDeclarationError(PoseInputError):
    """A widget's settings class is declared wrongly (a programming error in a widget module)."""


# --- messages ---------------------------------------------------------------------------

def shown(value) -> str:
    """A short, safe description of a (JSON) value for a message: never the whole of a long text."""
    if isinstance(value, bool) or isinstance(value, np.bool_):
        return "true" if value else "false"
    if value is None:
        return "null"
    if isinstance(value, str):
        return "text " + excerpt(value, 40)
    if isinstance(value, (int, np.integer)):
        v = int(value)
        if v.bit_length() > 100:
            return f"an integer of about {int(v.bit_length() * 0.30103) + 1} digits"
        return repr(v)
    if isinstance(value, (float, np.floating)):
        return repr(float(value))
    if isinstance(value, (list, tuple)):
        return f"a list of {len(value)} entries"
    if isinstance(value, Mapping):
        return f"an object with {len(value)} keys"
    describe = getattr(value, "describe", None)  # the parser's markers for numbers it refused to read
    if callable(describe):
        return describe()
    return f"a {type(value).__name__}"


def fail(path: str | None, problem: str, accepted: str) -> StateFileError:
    """The error for the entry at ``path``: what was wrong there and what is accepted."""
    where = path if path else "top level"
    return StateFileError(f"state {where}: {problem}; expected {accepted}", path or None)


# --- the checks each field kind is made of ----------------------------------------------

def check_number(v, path: str) -> float:
    """A finite number (not a boolean) -> float."""
    if isinstance(v, (bool, np.bool_)) or not isinstance(v, (int, float, np.integer, np.floating)):
        raise fail(path, f"got {shown(v)}", "a finite number")
    try:
        f = float(v)
    except OverflowError:
        raise fail(path, f"got {shown(v)}, beyond the range of float64 numbers",
                   "a finite number no larger in size than 1.8e308") from None
    if not math.isfinite(f):
        raise fail(path, f"got {shown(v)}", "a finite number (no NaN or infinity)")
    return f


_LINE_BREAKS = str.maketrans("", "", "\n\r\t")


def _bad_character(text: str, lines: bool, name: bool):
    """(position, character) of the first character text of this sort may not hold, or None."""
    if (text.translate(_LINE_BREAKS) if lines else text).isprintable():
        return None  # no control, format, surrogate or separator character (besides the space): nothing to find
    for i, ch in enumerate(text):
        cat = unicodedata.category(ch)
        if cat == "Cs":
            return i, ch
        if cat == "Cc" and not (lines and ch in "\n\r\t"):
            return i, ch
        if name and cat in ("Cf", "Zl", "Zp"):
            return i, ch
    return None


def _character_words(ch: str) -> str:
    code = ord(ch)
    if 0xD800 <= code <= 0xDFFF:
        return f"U+{code:04X}, a lone surrogate (not a character; it cannot be stored as UTF-8)"
    return f"U+{code:04X} {unicodedata.name(ch, 'a control character')}"


def check_text(v, path: str, *, limit: int = MAX_TEXT, lines: bool = True, empty: bool = True,
               name: bool = False, strip: bool = False) -> str:
    """Text of at most ``limit`` characters.

    Always refused: lone surrogates, and control characters (newline, carriage return and
    tab are allowed when ``lines``).  ``name`` also refuses format characters
    (bidirectional overrides and isolates, zero-width marks) and line or paragraph
    separators, which hide or reorder what a name looks like; ``strip`` refuses leading or
    trailing spaces; ``empty=False`` refuses the empty text.
    """
    what = _text_words(limit, lines, empty, name, strip)
    if not isinstance(v, str):
        raise fail(path, f"got {shown(v)}", what)
    if not v and not empty:
        raise fail(path, "got empty text", what)
    if len(v) > limit:
        raise fail(path, f"got text of {len(v)} characters {excerpt(v, 30)}", what)
    bad = _bad_character(v, lines, name)
    if bad is not None:
        raise fail(path, f"got {excerpt(v, 40)}, holding {_character_words(bad[1])} at position {bad[0]}", what)
    if strip and v != v.strip():
        raise fail(path, f"got {excerpt(v, 40)}, with leading or trailing spaces", what)
    return v


def _text_words(limit: int, lines: bool, empty: bool, name: bool, strip: bool) -> str:
    parts = [f"{'a name' if name else 'text'} of {'1' if not empty else '0'} to {limit} characters"]
    if name:
        parts.append("on one line, without control, format (bidirectional or zero-width) or separator characters")
    elif lines:
        parts.append("without control characters other than newline and tab")
    else:
        parts.append("on one line, without control characters")
    if strip:
        parts.append("without leading or trailing spaces")
    return ", ".join(parts)


def check_name(v, path: str, *, strip: bool = False, empty: bool = False, limit: int = NAME_LIMIT) -> str:
    """A name (of a pose, a frame, a measurement): one line of visible text, at most 200 characters."""
    return check_text(v, path, limit=limit, lines=False, empty=empty, name=True, strip=strip)


_CONVENTION_WORDS = "convention text in ASCII such as 'sequence=z-y-x unit=degrees'"


def check_convention(v, path: str) -> Convention:
    """Convention text (or a :class:`~posekit.core.convention.Convention`) -> Convention."""
    if isinstance(v, Convention):
        return v
    if not isinstance(v, str):
        raise fail(path, f"got {shown(v)}", _CONVENTION_WORDS)
    if len(v) > 1000:
        raise fail(path, f"got text of {len(v)} characters {excerpt(v, 30)}", _CONVENTION_WORDS + " (at most 1000 "
                   "characters)")
    odd = odd_characters(v)
    if odd:
        raise fail(path, f"got {excerpt(v, 40)}, holding {odd[0]}", _CONVENTION_WORDS)
    try:
        return Convention.parse(v)
    except ConventionError as exc:
        reason = isolate_controls(str(exc))
        reason = reason if len(reason) <= 300 else reason[:300] + "..."
        raise fail(path, f"got {excerpt(v, 60)}: {reason}", _CONVENTION_WORDS) from None


# --- field kinds -------------------------------------------------------------------------

class FieldKind:
    """What one settings field may hold; :meth:`check` returns the value as kept (or raises)."""

    accepted: str = ""

    def check(self, value, path: str):  # pragma: no cover - every kind overrides it
        raise NotImplementedError

    def plain(self, value):
        """The value as JSON holds it (tuples become lists)."""
        return list(value) if isinstance(value, tuple) else value


@dataclasses.dataclass(frozen=True)
class Floats(FieldKind):
    """A list of exactly ``n`` finite numbers -> a tuple of floats."""

    n: int

    @property
    def accepted(self) -> str:
        return f"a list of {self.n} finite numbers"

    def check(self, value, path):
        if not isinstance(value, (list, tuple)) or len(value) != self.n:
            raise fail(path, f"got {shown(value)}", self.accepted)
        return tuple(check_number(x, f"{path}[{i}]") for i, x in enumerate(value))


@dataclasses.dataclass(frozen=True)
class Float(FieldKind):
    """One finite number -> float."""

    accepted: ClassVar[str] = "a finite number"

    def check(self, value, path):
        return check_number(value, path)


@dataclasses.dataclass(frozen=True)
class Bool(FieldKind):
    """true or false (not 0 or 1)."""

    accepted: ClassVar[str] = "true or false"

    def check(self, value, path):
        if not isinstance(value, (bool, np.bool_)):
            raise fail(path, f"got {shown(value)}", self.accepted)
        return bool(value)


class Choice(FieldKind):
    """One of a fixed set of words."""

    def __init__(self, *options: str):
        if not options or not all(isinstance(o, str) for o in options):
            raise SettingsDeclarationError(f"Choice needs one or more words, got {options!r}")
        self.options = tuple(options)

    @property
    def accepted(self) -> str:
        return "one of " + ", ".join(repr(o) for o in self.options)

    def check(self, value, path):
        if not isinstance(value, str) or value not in self.options:
            raise fail(path, f"got {shown(value)}", self.accepted)
        return value

    def __eq__(self, other):
        return isinstance(other, Choice) and other.options == self.options

    def __hash__(self):
        return hash(self.options)

    def __repr__(self):
        return f"Choice{self.options!r}"


@dataclasses.dataclass(frozen=True)
class ConventionText(FieldKind):
    """Convention text; kept in its canonical written form (``Convention.to_text()``)."""

    accepted: ClassVar[str] = _CONVENTION_WORDS

    def check(self, value, path):
        return check_convention(value, path).to_text()


@dataclasses.dataclass(frozen=True)
class Text(FieldKind):
    """Text of at most ``limit`` characters (see :func:`check_text` for the other options)."""

    limit: int = MAX_TEXT
    lines: bool = True
    empty: bool = True
    name: bool = False
    strip: bool = False

    @property
    def accepted(self) -> str:
        return _text_words(self.limit, self.lines, self.empty, self.name, self.strip)

    def check(self, value, path):
        return check_text(value, path, limit=self.limit, lines=self.lines, empty=self.empty, name=self.name,
                          strip=self.strip)


@dataclasses.dataclass(frozen=True)
class Texts(FieldKind):
    """A list of at most ``items`` texts, each checked as ``each`` -> a tuple of str."""

    each: Text = Text(NAME_LIMIT, lines=False, name=True)
    items: int = MAX_ITEMS

    @property
    def accepted(self) -> str:
        return f"a list of at most {self.items} entries, each {self.each.accepted}"

    def check(self, value, path):
        if not isinstance(value, (list, tuple)) or len(value) > self.items:
            raise fail(path, f"got {shown(value)}", self.accepted)
        return tuple(self.each.check(x, f"{path}[{i}]") for i, x in enumerate(value))


@dataclasses.dataclass(frozen=True)
class IntRange(FieldKind):
    """A whole number from ``lo`` to ``hi`` (not a boolean, not 2.0)."""

    lo: int
    hi: int

    @property
    def accepted(self) -> str:
        return f"a whole number from {self.lo} to {self.hi}"

    def check(self, value, path):
        if isinstance(value, (bool, np.bool_)) or not isinstance(value, (int, np.integer)) \
                or not self.lo <= int(value) <= self.hi:
            raise fail(path, f"got {shown(value)}", self.accepted)
        return int(value)


def setting(kind: FieldKind):
    """Declare one field of a :class:`WidgetSettings` dataclass and its kind."""
    if not isinstance(kind, FieldKind):
        raise SettingsDeclarationError(f"setting(): got {type(kind).__name__}; expected a field kind such as "
                                       "Float() or Choice('a', 'b')")
    return dataclasses.field(metadata={"posekit_kind": kind})


# --- the settings base class ----------------------------------------------------------------

def check_keys(mapping, keys, path: str, accepted: str, accepted_object: str | None = None) -> None:
    """Refuse a non-object, unknown keys (the first five named) and missing keys, each with ``path``."""
    if not isinstance(mapping, Mapping):
        raise fail(path, f"got {shown(mapping)}", accepted_object or accepted)
    unknown = [k for k in mapping if k not in keys]
    if unknown:
        listed = ", ".join(excerpt(k, 30) if isinstance(k, str) else shown(k) for k in unknown[:5])
        raise fail(path, f"unknown key(s) {listed}", accepted)
    missing = [k for k in keys if k not in mapping]
    if missing:
        raise fail(path, f"missing key(s) {', '.join(missing)}", accepted)


class WidgetSettings:
    """Base of every widget's settings dataclass (frozen; one field per saved setting).

    Building one checks every field by its kind (then :meth:`check_together`), so an
    instance always holds settings its widget can be built from.
    """

    kind: ClassVar[str] = ""

    def __post_init__(self):
        for name, kind in self.field_kinds().items():
            object.__setattr__(self, name, kind.check(getattr(self, name), f"settings.{name}"))
        self.check_together()

    def check_together(self) -> None:
        """Checks across fields (override); raise :func:`fail` with the path of the field at fault."""

    @classmethod
    def field_kinds(cls) -> dict[str, FieldKind]:
        """Field name -> kind, in declaration order."""
        return {f.name: f.metadata["posekit_kind"] for f in dataclasses.fields(cls)}

    @classmethod
    def from_mapping(cls, mapping, path: str = "settings") -> "WidgetSettings":
        """Check a settings object (as read from JSON, or a State's settings) -> an instance."""
        kinds = cls.field_kinds()
        accepted = f"the settings of a {cls.kind!r} widget: " + (", ".join(kinds) or "no keys at all")
        check_keys(mapping, kinds, path, accepted, "an object holding " + accepted)
        return cls(**{k: mapping[k] for k in kinds})

    @classmethod
    def from_state(cls, state) -> "WidgetSettings":
        """The settings of ``state``, which must be a state of this widget kind, checked with this class."""
        widget = getattr(state, "widget", None)
        if widget is None or not hasattr(state, "settings"):
            raise StateFileError(f"expected a posekit State, got {type(state).__name__}; load one with "
                                 "posekit.io.state.load_state(path)")
        if widget != cls.kind:
            raise fail("widget", f"got {shown(widget)}", f"{cls.kind!r}: this state was written by another widget; "
                                                         f"rebuild it with that widget's from_state")
        return cls.from_mapping(state.settings)

    def as_dict(self) -> dict[str, Any]:
        """Field name -> value as kept (tuples for lists): the keyword arguments of the widget."""
        return {name: getattr(self, name) for name in self.field_kinds()}

    def plain(self) -> dict[str, Any]:
        """Field name -> value as JSON holds it."""
        return {name: kind.plain(getattr(self, name)) for name, kind in self.field_kinds().items()}


# --- the registry --------------------------------------------------------------------------

_REGISTRY: dict[str, type[WidgetSettings]] = {}
_KIND_NAME = re.compile(r"[a-z][a-z0-9-]{0,39}")


def register_settings(cls):
    """Class decorator: record ``cls`` as the settings of widget kind ``cls.kind``.

    Registering the same class again (a module reloaded) replaces it; a second, different
    class for a kind already taken raises :class:`SettingsDeclarationError`.
    """
    if not (isinstance(cls, type) and issubclass(cls, WidgetSettings) and dataclasses.is_dataclass(cls)):
        raise SettingsDeclarationError(f"register_settings: got {cls!r}; expected a frozen dataclass subclassing "
                                       "WidgetSettings")
    if not cls.__dataclass_params__.frozen:
        raise SettingsDeclarationError(f"register_settings: {cls.__name__} must be declared @dataclass(frozen=True)")
    if not isinstance(cls.kind, str) or not _KIND_NAME.fullmatch(cls.kind):
        raise SettingsDeclarationError(f"register_settings: {cls.__name__}.kind is {cls.kind!r}; expected a "
                                       "lower-case word such as 'explorer'")
    for f in dataclasses.fields(cls):
        if not isinstance(f.metadata.get("posekit_kind"), FieldKind):
            raise SettingsDeclarationError(f"register_settings: {cls.__name__}.{f.name} has no kind; declare it "
                                           "with setting(...)")
    old = _REGISTRY.get(cls.kind)
    if old is not None and old is not cls and (old.__module__, old.__qualname__) != (cls.__module__,
                                                                                      cls.__qualname__):
        raise SettingsDeclarationError(f"register_settings: widget kind {cls.kind!r} is already declared by "
                                       f"{old.__module__}.{old.__qualname__}")
    _REGISTRY[cls.kind] = cls
    return cls


def settings_class(kind: str) -> type[WidgetSettings] | None:
    """The settings class registered for widget ``kind``, or None (its module not imported)."""
    return _REGISTRY.get(kind)


def registered_kinds() -> tuple[str, ...]:
    """Widget kinds whose settings class is registered now."""
    return tuple(_REGISTRY)


@register_settings
@dataclasses.dataclass(frozen=True)
class NoWidgetSettings(WidgetSettings):
    """A state of plain poses, written by no widget: no settings at all."""

    kind: ClassVar[str] = "none"


# --- generic checking (no class registered for the kind) ---------------------------------------

_KEY = re.compile(r"[a-z_][a-z0-9_]{0,63}")
_GENERIC_WORDS = ("a number, true or false, text, or a flat list of those (finite numbers, whole numbers of at "
                  f"most 2**53 in size, text of at most {PASTE_LIMIT} characters)")


def _generic_scalar(v, path: str):
    if isinstance(v, (bool, np.bool_)):
        return bool(v)
    if isinstance(v, (int, np.integer)):
        if abs(int(v)) > _MAX_GENERIC_INT:
            raise fail(path, f"got {shown(v)}", _GENERIC_WORDS)
        return int(v)
    if isinstance(v, (float, np.floating)):
        return check_number(v, path)
    if isinstance(v, str):
        return check_text(v, path, limit=PASTE_LIMIT, lines=True)
    raise fail(path, f"got {shown(v)}", _GENERIC_WORDS)


def check_generic(settings, path: str = "settings") -> dict[str, Any]:
    """Settings of a widget kind whose class is not registered: JSON scalars and flat lists only.

    Keys are lower-case words (at most 64 of them); values are finite numbers, whole
    numbers of at most 2**53 in size, true/false, text (no control characters but newline
    and tab, no lone surrogates, at most ``PASTE_LIMIT`` characters) or flat lists of those
    (at most ``MAX_ITEMS`` entries, kept as tuples).  The widget's own class checks the rest
    when the widget is rebuilt.
    """
    if not isinstance(settings, Mapping):
        raise fail(path, f"got {shown(settings)}", "an object of settings")
    if len(settings) > MAX_KEYS:
        raise fail(path, f"got an object with {len(settings)} keys", f"at most {MAX_KEYS} settings")
    out = {}
    for key, v in settings.items():
        if not isinstance(key, str) or not _KEY.fullmatch(key):
            raise fail(path, f"got the key {excerpt(key, 30) if isinstance(key, str) else shown(key)}",
                       "setting names of lower-case letters, digits and '_' (at most 64 characters)")
        p = f"{path}.{key}"
        if isinstance(v, (list, tuple)):
            if len(v) > MAX_ITEMS:
                raise fail(p, f"got {shown(v)}", f"a list of at most {MAX_ITEMS} entries")
            items = []
            for i, x in enumerate(v):
                if isinstance(x, (list, tuple, Mapping)) or x is None:
                    raise fail(f"{p}[{i}]", f"got {shown(x)}", _GENERIC_WORDS)
                items.append(_generic_scalar(x, f"{p}[{i}]"))
            out[key] = tuple(items)
        else:
            out[key] = _generic_scalar(v, p)
    return out
