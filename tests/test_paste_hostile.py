"""Hostile input for the three text readers: pasted numbers, words and convention text.

* a generated catalogue of bad input (sizes, nesting, decimal commas, non-finite numbers,
  look-alike and control characters, malformed structure, bad code names), each asserting
  the typed error and that the message says what is accepted, quotes only a short excerpt
  and shows no raw control character;
* the numbers read equal the numbers written: random floats formatted in many styles
  (the outside reference is the generated floats themselves; Python's repr and the
  ``.17e`` format and numpy's ``floatmode="unique"`` print round-trip every float64
  exactly, common practice), and the standard-library path (Python's json and ast
  modules) gives what posekit's own reader gives;
* a hypothesis fuzz of parse_numbers, pose_from_words and Convention.parse: only a result
  or a PoseInputError subclass comes out, within the deadline;
* timing: a 1 MiB paste of the densest kinds is read in well under a second of CPU time,
  a 10 MB paste is refused before it is read.
"""

from __future__ import annotations

import json
import math
from datetime import timedelta

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from posekit.analysis import pose_from_words
from posekit.core.convention import TEXT_LIMIT, Convention
from posekit.core.errors import ConventionTextError, PoseInputError
from posekit.io import paste
from posekit.io.limits import PASTE_LIMIT, InputTooLargeError
from posekit.io.paste import (MAX_NESTING, AmbiguousCommaError, CodeNameError, NestingTooDeepError,
                              ParsedNumbers, PasteParseError, parse_numbers)
from posekit.io.words import MAX_DISTANCE, MAX_TURN_DEGREES, DescriptionError, read_description

READERS = {"paste": parse_numbers, "words": pose_from_words, "convention": Convention.parse}
RAW_CONTROLS = ["\u202e", "\u202d", "\u2066", "\u200b", "\ufeff", "\x00", "\x1b"]


# --------------------------------------------------------------------------------------
# the catalogue
# --------------------------------------------------------------------------------------

def _catalogue():
    cases = []

    def add(reader, text, error, says):
        shown = text[:24].encode("unicode_escape").decode()
        cases.append(pytest.param(reader, text, error, says, id=f"{reader}-{len(cases)}-{shown}"))

    # sizes: one character past the limit, whatever the text is made of
    for filler in ("1 ", "0.5, ", "[", " ", "x: 1\n", "\u202e", "\n"):
        add("paste", filler * (PASTE_LIMIT // len(filler) + 1), InputTooLargeError, f"{PASTE_LIMIT} characters")
    for filler in ("pitched 1 deg down, ", "level ", "x"):
        add("words", filler * (PASTE_LIMIT // len(filler) + 1), InputTooLargeError, f"{PASTE_LIMIT} characters")
    for filler in ("unit=degrees ", " ", "z"):
        add("convention", filler * (TEXT_LIMIT // len(filler) + 1), ConventionTextError, f"{TEXT_LIMIT} characters")

    # nesting deeper than MAX_NESTING, in every bracket kind, bare, inside array(...) or a JSON object
    for depth in (MAX_NESTING + 1, MAX_NESTING + 2, 50, 500, 20000):
        add("paste", "[" * depth + "1" + "]" * depth, NestingTooDeepError, f"at most {MAX_NESTING} levels")
        add("paste", "(" * depth + "1" + ")" * depth, NestingTooDeepError, f"at most {MAX_NESTING} levels")
        add("paste", "array(" + "[" * depth + "1." + "]" * depth + ")", NestingTooDeepError, "levels of brackets")
        add("paste", '{"position": ' * depth + "1" + "}" * depth, NestingTooDeepError, "levels of brackets")
        add("paste", "[" * depth, NestingTooDeepError, "levels of brackets")

    # decimal commas and thousands separators, generated; the message offers both readings
    rng = np.random.default_rng(20240611)
    for _ in range(10):
        a, b, c = (int(v) for v in rng.integers(0, 99, 3))
        frac = int(rng.integers(1, 9999))
        add("paste", f"{a},{frac} {b} {c} {a},{frac}", AmbiguousCommaError, "decimals written with a dot")
        thousands = f"{int(rng.integers(1, 999))},{int(rng.integers(0, 999)):03d}.{frac}"
        add("paste", f"{thousands} {b} {c}", AmbiguousCommaError, "without thousands separators")
    for text in ("0,7071 0 0 0,7071", "1,5, 2,5", "[0,5 1 2]", "x: 0,25\ny: 1\nz: 2", "0,7071\t0\t0\t0,7071",
                 "\u22120,5 1 2", "1.000,5 2 3", "12,345,678.9 0 0", "[1,000.5, 2, 3]", "roll: 10,5 deg"):
        add("paste", text, AmbiguousCommaError, "posekit does not guess")

    # numbers that are not finite, in every place a number can sit
    for word in ("nan", "NaN", "inf", "-inf", "+inf", "Infinity", "1e999", "-1e400", "1e309"):
        for template in ("1 2 {}", "[1, 2, {}]", "x: {}\ny: 0\nz: 0", "array([{}, 0., 0.])",
                         "[[1, 0, 0], [0, 1, 0], [0, 0, {}]]"):
            add("paste", template.format(word), PasteParseError, "finite")

    # characters that look like digits, signs or separators, and control characters
    for ch in ("\uff11", "\u0663", "\u2010", "\u2013", "\uff0c", "\u202e", "\u200b", "\ufeff", "\x00", "\u0445",
               "\u00ba", "\u066b"):
        for template in ("1 2 {}3", "[1, 2{} 3]", "x{}: 1"):
            add("paste", template.format(ch), PasteParseError, f"U+{ord(ch):04X}")

    # malformed structure
    for text in ("1..2", "1e", "--1", "[1,,2]", "1;;2", "[1, 2", "[1, 2]]", "((1, 2)", "[1, [2]]", "[[1, 2], [3]]",
                 "array([1, 2]", "array[1, 2]", "1 2 'abc", 'x: "1"', "{x: 1", "x: 1 x: 2", "[]", "()",
                 "array([])", "1 2 $", "1 2 3 deg", "R = ", "\n\n", "# only a comment", "1 2 3 abc",
                 "[1, 2)", "1 2 3deg4", "array([1, 2], dtype)", "position: [[1, 2, 3]]", "x: one"):
        add("paste", text, PasteParseError, "accepted")
    add("paste", "1 2 3 " * 20000 + "oops", PasteParseError, "accepted")
    add("paste", "1 2 " + "q" * 200000, PasteParseError, "accepted")

    # words: not finite, absurd, decimal commas, look-alikes, controls, long unknown words
    for word in ("nan", "NaN", "inf", "Infinity", "1e400", "-1e999"):
        for template in ("yawed {} degrees left", "pitched {} deg down", "turned {} rad about z", "{} m forward",
                         "left {} cm"):
            add("words", template.format(word), DescriptionError, "accepted")
    for text in (f"pitched {MAX_TURN_DEGREES + 1:g} degrees down", "yawed 1e6 rad left", "rolled 62.9 rad right",
                 f"{MAX_DISTANCE * 10:g} m forward", "1e300 mm up", "turned 1e308 degrees about z"):
        add("words", text, DescriptionError, "no pose is described that way")
    for text in ("pitched 2,5 degrees down", "0,3 m forward", "yawed 10,0 deg left"):
        add("words", text, DescriptionError, "decimal comma")
    for text in ("yawed 10 d\u0435grees left", "pitched 10 degrees d\u043ewn", "\uff10.3 m forward",
                 "yawed 10 deg\u202eleft", "0.3 m f\u200borward", "pitched \u22125 degrees down"):
        add("words", text, DescriptionError, "U+")
    for text in ("x" * 5000, "pitched 25 degrees sideways", "flew 3 m forward", "0.3 forward", ""):
        add("words", text, DescriptionError, "accepted")

    # convention text: look-alikes in place of the letters, '-', '=' and the blank of a good text
    good = "sequence=z-y-x unit=degrees"
    for old, new in (("e", "\u0435"), ("y", "\u0443"), ("x", "\u0445"), ("-", "\u2010"), ("-", "\u2011"),
                     ("-", "\u2212"), ("=", "\uff1d"), (" ", "\u00a0"), (" ", "\u3000"), ("i", "\u0456"),
                     ("s", "\u0455"), ("c", "\u0441")):
        for count in (1, 2):
            assert good.replace(old, new, count) != good
            add("convention", good.replace(old, new, count), ConventionTextError, f"U+{ord(new):04X}")
    for ch in ("\u202e", "\u200b", "\x00", "\x1b", "\ufeff"):
        add("convention", ch + good, ConventionTextError, f"U+{ord(ch):04X}")
    for text, says in (("SEQUENCE=zyx", "use lower case"), ("seq=zyx", "accepted keys"), ("unit=grad", "accepted"),
                       ("unit=degrees unit=radians", "accepted"), ("", "accepted keys"), ("sequence", "accepted keys"),
                       ("=zyx", "accepted keys"), ("sequence=zyx=1", "accepted"), ("unit=" + "q" * 900, "accepted")):
        add("convention", text, ConventionTextError, says)
    return cases


CATALOGUE = _catalogue()


def test_the_catalogue_is_large():
    assert len(CATALOGUE) >= 100
    kinds = {c.values[0] for c in CATALOGUE}
    assert kinds == {"paste", "words", "convention"}


@pytest.mark.parametrize("reader, text, error, says", CATALOGUE)
def test_hostile_input_is_a_typed_error_that_says_what_is_accepted(reader, text, error, says):
    with pytest.raises(error) as info:
        READERS[reader](text)
    message = str(info.value)
    assert isinstance(info.value, PoseInputError)
    assert says in message, message
    assert len(message) < 2000, f"{len(message)} characters: the message quotes too much"
    for ch in RAW_CONTROLS:
        assert ch not in message, f"raw U+{ord(ch):04X} in the message"


@pytest.mark.parametrize("name", ["", "1x", "a b", "class", "None", "x-y", "x; import os", "numbers\u202e", 5, None])
def test_code_accepts_only_python_identifiers(name):
    interp = parse_numbers("1 0 0 0").interpretations[0]
    with pytest.raises(CodeNameError) as info:
        interp.code(name)
    assert "accepted: a Python identifier" in str(info.value)
    assert "\u202e" not in str(info.value)


def test_code_keeps_working_with_identifiers():
    interp = parse_numbers("1 0 0 0").interpretations[0]
    for name in ("numbers", "q", "pose_1", "_x", "\u03bb"):  # a Greek letter is a Python identifier
        assert name in interp.code(name)


def test_errors_point_at_the_place_and_quote_a_window_of_a_long_line():
    text = "1 2 3 " * 50000 + "oops"
    with pytest.raises(PasteParseError) as info:
        parse_numbers(text)
    err = info.value
    assert err.position == len(text) - 4
    line, caret = err.excerpt.split("\n")
    assert line.startswith("...") and "oops" in line and len(line) < 90
    assert line[len(caret) - 1:].startswith("oops")  # the caret sits under the word


def test_bidi_characters_are_shown_as_code_points_and_the_caret_still_points():
    with pytest.raises(PasteParseError) as info:
        parse_numbers("1 2\u202e 3 x")
    line, caret = info.value.excerpt.split("\n")
    assert "<U+202E>" in line and line[len(caret) - 1] == "<"


def test_commas_as_separators_keep_working():
    cases = {"1, 2, 3": [1, 2, 3], "[0.5, 0.5, 0.5, 0.5]": [0.5] * 4, "1,5,2,5": [1, 5, 2, 5],
             "1,0,0\n0,1,0\n0,0,1": [1, 0, 0, 0, 1, 0, 0, 0, 1],
             "[[1,0,0],[0,1,0],[0,0,1]]": [1, 0, 0, 0, 1, 0, 0, 0, 1],
             "0.5,0.5,0.5,0.5": [0.5] * 4, "1e-05,234.5,1": [1e-05, 234.5, 1.0], "[0,1]": [0, 1],
             "x: 1, y: 2, z: 3": [1, 2, 3], "0,100.5 2": [0, 100.5, 2], "1 , 2 , 3": [1, 2, 3]}
    for text, numbers in cases.items():
        assert parse_numbers(text).numbers.tolist() == numbers, text


def test_ambiguous_comma_names_both_readings():
    with pytest.raises(AmbiguousCommaError) as info:
        parse_numbers("0,7071 0 0 0,7071")
    assert "0.7071" in info.value.reason and "0 and 7071" in info.value.reason
    with pytest.raises(AmbiguousCommaError) as info:
        parse_numbers("1,000.5 0 0")
    assert "1000.5" in info.value.reason and "1, 000.5" in info.value.reason


def test_words_refuse_without_making_a_nan_pose():
    for text in ("yawed nan degrees left", "yawed inf degrees left", "yawed 1e400 degrees left"):
        with pytest.raises(DescriptionError):
            read_description(text)
    p = read_description(f"yawed {MAX_TURN_DEGREES:g} degrees left, {MAX_DISTANCE:g} m forward")  # the limits pass
    assert np.all(np.isfinite(p.rotation)) and p.translation[0] == MAX_DISTANCE


def test_convention_message_names_the_look_alike_instead_of_contradicting_itself():
    with pytest.raises(ConventionTextError) as info:
        Convention.parse("sequence=z\u0443x")
    message = str(info.value)
    assert "U+0443 CYRILLIC SMALL LETTER U" in message
    assert "'zyx' is not a known value" not in message
    with pytest.raises(ConventionTextError) as info:
        Convention.parse("sequence=" + "z" * 10_000_000)
    assert len(str(info.value)) < 400


# --------------------------------------------------------------------------------------
# the numbers read are the numbers written
# --------------------------------------------------------------------------------------

def _floats(rng, n):
    """Random float64 over many magnitudes, with whole numbers, zeros and a negative zero."""
    v = rng.normal(size=n) * 10.0 ** rng.uniform(-6, 6, n)
    whole = rng.random(n) < 0.2
    v[whole] = np.round(rng.normal(size=int(whole.sum())) * 100)
    v[rng.random(n) < 0.1] = 0.0
    v[rng.random(n) < 0.05] = -0.0
    return v


def _r(x) -> str:
    """Python's shortest repr of a float64, which reads back exactly."""
    return repr(float(x))


def _rows(values, sep, row_sep):
    return row_sep.join(sep.join(map(_r, values[i:i + 3])) for i in range(0, len(values), 3))


#: styles: (name, counts it applies to, text from the float64 values)
STYLES = [
    ("spaces", (3, 4, 7, 9), lambda v: " ".join(map(_r, v))),
    ("comma space", (3, 4, 7, 9), lambda v: ", ".join(map(_r, v))),
    ("tight commas", (3, 4, 7, 9), lambda v: ",".join(map(_r, v))),
    ("tabs", (3, 4), lambda v: "\t".join(map(_r, v))),
    ("newlines", (3, 4), lambda v: "\n".join(map(_r, v))),
    ("crlf rows", (9,), lambda v: _rows(v, " ", "\r\n")),
    ("semicolon rows", (9,), lambda v: _rows(v, " ", "; ")),
    ("brackets", (3, 4, 7, 9), lambda v: "[" + ", ".join(map(_r, v)) + "]"),
    ("tuple", (3, 4, 7), lambda v: "(" + ", ".join(map(_r, v)) + ")"),
    ("trailing comma", (3, 4), lambda v: "[" + ", ".join(map(_r, v)) + ",]"),
    ("nested rows", (9,), lambda v: "[" + ", ".join("[" + ", ".join(map(_r, v[i:i + 3])) + "]"
                                                     for i in range(0, 9, 3)) + "]"),
    ("json", (3, 4, 7, 9), lambda v: json.dumps([float(x) for x in v])),
    ("numpy repr", (3, 4, 9), lambda v: "array(" + np.array2string(np.asarray(v), separator=", ",
                                                                     floatmode="unique") + ")"),
    ("numpy print", (9,), lambda v: np.array2string(np.asarray(v).reshape(3, 3), floatmode="unique")),
    ("numpy dtype", (4,), lambda v: "np.array(" + np.array2string(np.asarray(v), separator=", ", floatmode="unique")
                                    + ", dtype=float64)"),
    ("scientific", (3, 4, 9), lambda v: " ".join(f"{x:.17e}" for x in v)),
    ("typographic minus", (3, 4), lambda v: " ".join(map(_r, v)).replace("-", "\u2212")),
    ("label", (9,), lambda v: "R = [" + ", ".join(map(_r, v)) + "]"),
    ("comment", (4,), lambda v: "# pasted from a log\n" + " ".join(map(_r, v)) + "  # x y z w"),
    ("printed rows in brackets", (9,), lambda v: "\n".join("[" + " ".join(map(_r, v[i:i + 3])) + "]"
                                                          for i in range(0, 9, 3))),
]


def _same_floats(read, written):
    read, written = np.asarray(read, dtype=np.float64), np.asarray(written, dtype=np.float64)
    return read.shape == written.shape and np.array_equal(read, written) and \
        np.array_equal(np.signbit(read), np.signbit(written))


@pytest.mark.parametrize("style, counts, make", STYLES, ids=[s[0] for s in STYLES])
def test_numbers_read_equal_the_numbers_written(style, counts, make):
    rng = np.random.default_rng(sum(map(ord, style)))
    for count in counts:
        for _ in range(25):
            values = _floats(rng, count)
            text = make(values)
            parsed = parse_numbers(text)
            assert _same_floats(parsed.numbers, values), (style, text, parsed.numbers)
            assert parsed.count == count


def test_fixed_decimals_read_back_exactly():
    rng = np.random.default_rng(11)
    for digits in (1, 3, 4, 6, 9):
        values = np.round(rng.normal(size=9) * 50, digits)   # the float nearest each printed decimal
        text = " ".join(f"{x:.{digits}f}" for x in values)
        assert _same_floats(parse_numbers(text).numbers, values), text


def test_named_values_with_units_read_back_exactly():
    rng = np.random.default_rng(12)
    for _ in range(40):
        a, b, c = _floats(rng, 3)
        a, b, c = float(a), float(b), float(c)
        p = parse_numbers(f"x: {a!r} mm\ny: {b!r} mm\nz: {c!r} mm")
        assert _same_floats(p.numbers, [a, b, c])
        assert np.allclose(p.interpretations[0].translation, np.array([a, b, c]) * 1e-3, rtol=1e-15, atol=0)
        p = parse_numbers(f"roll: {a!r} deg, pitch: {b!r} deg, yaw: {c!r} deg")
        assert _same_floats(p.numbers, [a, b, c])
        assert {i.convention.unit for i in p.interpretations} == {"degrees"}
        p = parse_numbers(f"rx={a!r}rad ry={b!r}rad rz={c!r}rad")  # units glued on
        assert _same_floats(p.numbers, [a, b, c])
        q = _floats(rng, 4)
        obj = {"x": a, "y": b, "z": c, "qx": q[0], "qy": q[1], "qz": q[2], "qw": q[3]}
        p = parse_numbers(json.dumps({k: float(v) for k, v in obj.items()}))
        assert _same_floats(p.numbers, [a, b, c, *q])


LIST_STYLES = [s for s in STYLES if s[0] in ("brackets", "tuple", "trailing comma", "nested rows", "json")]


@pytest.mark.parametrize("style, counts, make", LIST_STYLES, ids=[s[0] for s in LIST_STYLES])
def test_the_standard_library_path_gives_what_posekits_reader_gives(style, counts, make):
    rng = np.random.default_rng(sum(map(ord, style)) + 1)
    for count in counts:
        for _ in range(25):
            text = make(_floats(rng, count))
            assert paste._from_standard_library(text) is not None, text  # json or ast read it
            fast = paste._parse(text, PASTE_LIMIT, standard_library=True)
            own = paste._parse(text, PASTE_LIMIT, standard_library=False)
            assert _same_floats(fast.numbers, own.numbers) and fast.shape == own.shape
            assert (fast.source_format, fast.notes, fast.names) == (own.source_format, own.notes, own.names)
            assert [(i.kind, i.convention, i.score) for i in fast.interpretations] == \
                   [(i.kind, i.convention, i.score) for i in own.interpretations]


@pytest.mark.parametrize("text", ["[(1), (2)]", "[- 1, 2, 3]", "(-0, 1, 2)", "(1)", "[1, 2], [3, 4]",
                                  "[1e999, 0, 0]", "[NaN, 0, 0]", "[true, 0, 0]", "[1_000, 2, 3]", "[0x10, 1, 2]",
                                  "[1j, 2, 3]", "[01, 2, 3]", "[[1, 2], [3]]", "[1, [2, 3]]", "[]", "[[]]"])
def test_where_python_reads_otherwise_the_standard_library_is_not_used(text):
    assert paste._from_standard_library(text) is None
    outcomes = []
    for standard_library in (True, False):
        try:
            p = paste._parse(text, PASTE_LIMIT, standard_library)
            outcomes.append((p.numbers.tolist(), np.signbit(p.numbers).tolist(), p.shape, p.source_format))
        except PoseInputError as err:
            outcomes.append((type(err).__name__, str(err)))
    assert outcomes[0] == outcomes[1]


def _outcome(text, standard_library=False):
    try:
        p = paste._parse(text, PASTE_LIMIT, standard_library)
        return ("read", p.numbers.tolist(), np.signbit(p.numbers).tolist(), p.shape, p.source_format, p.notes)
    except PoseInputError as err:
        return ("refused", type(err).__name__, str(err))


def _random_structures(seed, count):
    """Texts made of numbers, separators and brackets, most of them malformed somewhere."""
    rng = np.random.default_rng(seed)
    pieces = np.array(["1", "-2.5", "3e1", " ", ", ", ",", ";", "\n", "[", "]", "(", ")", "[1 2 3]", "[4, 5, 6]"])
    weights = np.array([6, 3, 2, 5, 3, 3, 2, 2, 3, 3, 1, 1, 2, 2], dtype=float)
    for _ in range(count):
        yield "".join(rng.choice(pieces, size=int(rng.integers(1, 25)), p=weights / weights.sum()))


def _random_well_formed(seed, count):
    """Well-formed texts of random shape, written with random separators, blanks and newlines."""
    rng = np.random.default_rng(seed)

    def sep():
        return str(rng.choice([" ", ", ", ",", " ,\n ", "\n", "  "]))

    def row(n):
        return sep().join(_r(x) for x in _floats(rng, n)) + str(rng.choice(["", ",", "\n"]))

    for _ in range(count):
        rows, cols = int(rng.integers(1, 5)), int(rng.integers(1, 5))
        form = int(rng.integers(0, 5))
        if form == 0:    # nested lists
            yield "[" + sep().join("[" + row(cols) + "]" for _ in range(rows)) + "]"
        elif form == 1:  # rows split by ';' inside one bracket
            yield "[" + ";".join(row(cols) for _ in range(rows)) + str(rng.choice(["", ";"])) + "]"
        elif form == 2:  # printed rows in brackets
            yield str(rng.choice(["\n", ",\n", ";"])).join("[" + row(cols) + "]" for _ in range(rows))
        elif form == 3:  # bare rows
            yield "\n".join(sep().join(_r(x) for x in _floats(rng, cols)) for _ in range(rows))
        else:            # a flat list
            yield str(rng.choice(["[", "("])) + row(cols * rows) + "]"


def test_the_readers_one_step_regexes_agree_with_its_token_by_token_loop(monkeypatch):
    texts = list(_random_structures(5, 3000)) + list(_random_well_formed(8, 2000))
    texts += ["[" + "; ".join(" ".join("7" for _ in range(c)) for _ in range(r)) + "]"
              for r in (1, 2, 3) for c in (1, 3)]
    texts += ["[[1 2 3]\n [4 5 6]]", "[1 2 3]\n[4 5 6]", "[1 2 3],[4 5 6];[7 8 9]", "1 2 3\n4 5 6\n", "1,2;3,4;"]
    fast = [_outcome(t) for t in texts]
    never = __import__("re").compile(r"(?!)")
    for name in ("_FLAT_LIST", "_SEMICOLON_LIST", "_FLAT_RUN", "_PRINTED_ROWS", "_BARE"):
        monkeypatch.setattr(paste, name, never)
    slow = [_outcome(t) for t in texts]
    for text, a, b in zip(texts, fast, slow):
        assert a == b, text
    assert sum(f[0] == "read" for f in fast) > 1500  # both kinds of outcome are exercised
    assert sum(f[0] == "refused" for f in fast) > 1500


def test_the_standard_library_agrees_on_random_structures():
    used = 0
    for text in list(_random_structures(6, 3000)) + list(_random_well_formed(9, 2000)):
        used += paste._from_standard_library(text) is not None
        assert _outcome(text, True) == _outcome(text, False), text
    assert used > 300  # json or ast read a good share of them


# --------------------------------------------------------------------------------------
# fuzz
# --------------------------------------------------------------------------------------

FUZZ = settings(deadline=timedelta(milliseconds=1500), derandomize=True, database=None, max_examples=400,
                suppress_health_check=[HealthCheck.too_slow])
_PIECES = (list("0123456789.,;:=[](){}+-eE \n\t#\"'_") + ["\u2212", "\u202e", "\u00a0", "°", "\u0435", "\uff11",
           "nan", "inf", "array(", "dtype=", "1e999", "0,5", "x", "y", "z", "w", "qx", "roll", "deg", "mm", "rad",
           "position", "orientation", "R = ", "np.array", "1,000.5", "[[", "]]"])
PASTES = st.one_of(st.lists(st.sampled_from(_PIECES), max_size=60).map("".join), st.text(max_size=80))
_WORD_PIECES = ["pitched", "yawed", "rolled", "turned", "about", "x", "y", "z", "-", "+", "up", "down", "left", "right",
                "forward", "back", "degrees", "deg", "rad", "°", "m", "cm", "mm", "and", "then", ",", ";", "level",
                "nan", "inf", "1e400", "25", "0.3", "-2", "1e5", "3600", "0,5", " ", "\u0435", "\u202e"]
WORDS = st.one_of(st.lists(st.sampled_from(_WORD_PIECES), max_size=30).map(" ".join), st.text(max_size=60))
_CONV_PIECES = ["sequence", "axes", "unit", "wrap", "scalar", "algebra", "action", "direction", "layout", "=", " ",
                ",", ";", "\n", "z-y-x", "zyx", "x-y-z", "intrinsic", "extrinsic", "degrees", "radians", "first",
                "last", "jpl", "hamilton", "row-major", "\u2010", "\uff1d", "\u0443", "\u00a0", "Z", "\x00"]
CONVENTIONS = st.one_of(st.lists(st.sampled_from(_CONV_PIECES), max_size=20).map("".join), st.text(max_size=60))


@FUZZ
@given(PASTES)
def test_fuzz_parse_numbers_gives_a_result_or_a_typed_error(text):
    try:
        p = parse_numbers(text)
    except PoseInputError:
        return
    assert isinstance(p, ParsedNumbers)
    assert np.all(np.isfinite(p.numbers)) and p.numbers.size >= 1


@FUZZ
@given(WORDS)
def test_fuzz_pose_from_words_gives_a_result_or_a_typed_error(text):
    try:
        p = pose_from_words(text)
    except PoseInputError:
        return
    assert np.all(np.isfinite(p.rotation)) and np.all(np.isfinite(p.translation))
    assert np.allclose(p.rotation @ p.rotation.T, np.eye(3), atol=1e-9)


@FUZZ
@given(CONVENTIONS)
def test_fuzz_convention_parse_gives_a_result_or_a_typed_error(text):
    try:
        c = Convention.parse(text)
    except PoseInputError:
        return
    assert isinstance(c, Convention) and Convention.parse(c.to_text()) == c


# --------------------------------------------------------------------------------------
# time
# --------------------------------------------------------------------------------------

def _mib(unit: str) -> str:
    """Whole copies of ``unit`` up to the paste limit."""
    return unit * (PASTE_LIMIT // len(unit))


DENSE = {
    "bare numbers": lambda: _mib("0.123456 -1.5e-3 7 "),
    "one digit and a comma": lambda: _mib("1,"),
    "printed rows in brackets": lambda: _mib("[1 2 3]\n"),
    "nested pairs (json)": lambda: "[" + ",".join(["[1,2]"] * (PASTE_LIMIT // 6 - 1)) + "]",
    "numpy print": lambda: "[" + "\n ".join(["[1. 0. 0.]"] * (PASTE_LIMIT // 13)) + "]",
    "typographic minus": lambda: _mib("\u22121 "),
    "array with dtype": lambda: "array([" + ", ".join(["1."] * (PASTE_LIMIT // 4 - 10)) + "], dtype=float64)",
    "rows split by semicolons": lambda: "[" + "1;" * (PASTE_LIMIT // 2 - 1) + "]",
    "lists of one (python reads subscripts)": lambda: "[" + "[1]" * (PASTE_LIMIT // 3 - 1) + "]",
    "signs between (python reads operators)": lambda: "[" + "1-" * (PASTE_LIMIT // 2 - 2) + "1]",
}


# How long these take is measured by benchmarks/bench_input_guards.py (figures against Python's
# json on the same texts); the tests check what is read or refused, never a time.

@pytest.mark.parametrize("kind", sorted(DENSE))
def test_a_mebibyte_paste_is_read_whole(kind):
    text = DENSE[kind]()
    assert len(text) <= PASTE_LIMIT
    assert parse_numbers(text).count > 100_000


#: Texts of about the paste limit that must be refused (depth, units, words, NaN, quotes, brackets).
HOSTILE_MEBIBYTES = {
    "brackets to the limit": lambda: "[" * (PASTE_LIMIT - 1) + "1",
    "a unit word on every number": lambda: "1deg " * (PASTE_LIMIT // 5),
    "one long word": lambda: "x" * PASTE_LIMIT,
    "NaN last": lambda: "1 " * (PASTE_LIMIT // 2 - 2) + "nan",
    "quotes": lambda: '"' * PASTE_LIMIT,
    "lists never closed": lambda: "[1 " * (PASTE_LIMIT // 3),
    "minus signs": lambda: "[" + "-" * (PASTE_LIMIT - 3) + "1]",
    "empty objects": lambda: "{}" * (PASTE_LIMIT // 2),
    "separators only": lambda: ",;" * (PASTE_LIMIT // 2),
}


@pytest.mark.parametrize("kind", sorted(HOSTILE_MEBIBYTES))
def test_hostile_mebibytes_are_refused(kind):
    with pytest.raises(PoseInputError):
        parse_numbers(HOSTILE_MEBIBYTES[kind]())


def test_ten_megabytes_are_refused_before_reading(monkeypatch):
    import posekit.io.paste as paste
    import posekit.io.words as words

    def never(*args, **kwargs):
        raise AssertionError("the text was read before its size was checked")

    text = "0.5 " * 2_500_000
    monkeypatch.setattr(paste, "_unwrap_numpy_scalars", never)    # the paste reader's first step
    monkeypatch.setattr(words, "odd_characters", never)            # the description reader's first step
    for reader in (parse_numbers, pose_from_words):
        with pytest.raises(InputTooLargeError, match=f"limit of {PASTE_LIMIT} characters"):
            reader(text)
    with pytest.raises(ConventionTextError, match=f"limit of {TEXT_LIMIT} characters"):
        Convention.parse(text)


def test_a_larger_limit_can_be_asked_for():
    text = "1 " * (PASTE_LIMIT // 2 + 10)
    with pytest.raises(InputTooLargeError):
        parse_numbers(text)
    assert parse_numbers(text, limit=2 * PASTE_LIMIT).count == PASTE_LIMIT // 2 + 10
    assert math.isclose(read_description("level " * 200_000, limit=2 * PASTE_LIMIT).rotation[0, 0], 1.0)
