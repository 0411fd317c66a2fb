"""Words and code from a :class:`~posekit.explain.slips.Slip`: made here, at the edge, and parsed nowhere.

:func:`sentence` says what the slip claims, naming stated fields as stated;
:func:`fix_code` writes a runnable posekit snippet that reads the numbers the way
they were written, undoes the slip and writes them back in the user's stated
reading (one pose, or an ``(N, n)`` array of them with ``batch=True``).
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np

from .readings import Reading
from .slips import REMAPS, Slip, describe_remap

__all__ = ["slip_parts", "sentence", "fix_code", "format_matrix"]

_ROTATION_NAMES = {"quaternion": "the quaternion", "euler": "the Euler angles", "rotation-vector": "the rotation vector",
                   "matrix": "the matrix"}


def _mark(field: str, stated: Reading) -> str:
    return " (stated)" if field in stated.stated else ""


@lru_cache(maxsize=96)
def _remap_words(index: int, transposed: bool) -> str:
    """Words of remap ``index`` (its transpose for the child side, which maps the other way)."""
    m = REMAPS[index]
    return describe_remap(m.T if transposed else m)


def slip_parts(slip: Slip) -> list[str]:
    """One clause per thing the slip claims went wrong, in :data:`FAMILY_ORDER`."""
    s, t = slip.stated, slip.true
    changes = {f: (a, b) for f, a, b in slip.field_changes()}
    rk = t.rotation_kind
    name = _ROTATION_NAMES[rk]
    out: list[str] = []
    for fam in slip.families():
        if fam == "direction":
            a, b = changes["direction"]
            out.append(f"the numbers are {b} (the inverse transform) but were read as {a}{_mark(fam, s)}"
                       if t.has_translation else
                       f"the rotation is {b} (its inverse) but was read as {a}{_mark(fam, s)}")
        elif fam == "action":
            a, b = changes["action"]
            what = "re-expresses a fixed vector in the turned frame" if b == "passive" else "turns vectors"
            out.append(f"{name} build{'s' if rk != 'euler' else ''} the {b} matrix (it {what}) "
                       f"but {'were' if rk == 'euler' else 'was'} read as {a}{_mark(fam, s)}")
        elif fam == "layout":
            a, b = changes["layout"]
            words = {"row-major": "row by row", "column-major": "column by column"}
            out.append(f"the matrix was written {words[b]} ({b}) but read {words[a]}{_mark(fam, s)}")
        elif fam == "scalar":
            a, b = changes["scalar"]
            out.append(f"the quaternion was written scalar-{b} but read scalar-{a}{_mark(fam, s)}")
        elif fam == "algebra":
            a, b = changes["algebra"]
            nm = {"hamilton": "Hamilton (ij = k)", "jpl": "JPL (ij = -k)"}
            out.append(f"the quaternion follows the {nm[b]} algebra but was read as {nm[a]}{_mark(fam, s)}")
        elif fam == "unit":
            a, b = changes["unit"]
            out.append(f"the angles were written in {b} but read as {a}{_mark(fam, s)}")
        elif fam == "axes" and "sequence" not in changes:
            a, b = changes["axes"]
            out.append(f"the Euler angles are {b} (about the {'moving' if b == 'intrinsic' else 'fixed'} axes) "
                       f"but were read as {a}{_mark(fam, s)}")
        elif fam == "sequence":
            a, b = changes["sequence"]
            if "axes" in changes:
                out.append(f"the Euler angles are {b} {t.convention.axes} but were read as {a} "
                           f"{s.convention.axes}{_mark('sequence', s) or _mark('axes', s)}")
            else:
                out.append(f"the Euler sequence is {b} but was read as {a}{_mark(fam, s)}")
        elif fam == "kind":
            words = {"euler": "Euler angles", "rotation-vector": "a rotation vector"}
            out.append(f"the angles are {words[rk]} but were read as {words[s.rotation_kind]}")
        elif fam == "order":
            out.append("the rotation comes before the position but was read after it" if not t.position_first
                       else "the position comes before the rotation but was read after it")
        elif fam == "transposed":
            out.append("the rotation block is transposed while the translation is not" if t.has_translation
                       else "the matrix is transposed")
        elif fam == "length_scale":
            out.append("the translation was written in millimetres but read as metres" if slip.length_scale < 1
                       else "the translation was written in metres but read as millimetres")
        elif fam == "translation_frame":
            out.append("the translation is expressed in the child frame's axes instead of the parent's"
                       if slip.translation_frame == "child-axes" else
                       "the translation is that of the inverse transform (the parent origin seen from the child)")
        elif fam == "parent_remap":
            out.append(f"the parent frame's axes are remapped: {_remap_words(slip.parent_remap, False)}")
        elif fam == "child_remap":
            out.append(f"the child frame's axes are remapped: {_remap_words(slip.child_remap, True)}")
    return out


def sentence(slip: Slip) -> str:
    """The slip as one sentence; the empty slip says the numbers follow the stated reading."""
    parts = slip_parts(slip)
    if not parts:
        return "The numbers match the expected pose as read: no convention error found."
    text = parts[0] if len(parts) == 1 else ", ".join(parts[:-1]) + ", and " + parts[-1]
    return text[0].upper() + text[1:] + "."


def format_matrix(m) -> str:
    return "np.array([" + ", ".join("[" + ", ".join(f"{v:g}" for v in row) + "]" for row in np.asarray(m)) + "])"


def _number_list(values) -> str:
    return "[" + ", ".join(repr(float(v)) for v in np.ravel(values)) + "]"


def fix_code(slip: Slip, numbers=None, *, batch: bool = False, normalise: bool = False,
             project: bool = False) -> str:
    """A posekit snippet: read ``numbers`` as written, undo the slip, write them in the stated reading.

    ``numbers``: the one pose's numbers in the true reading's slot order (ignored with
    ``batch=True``, where the snippet expects ``logged_numbers`` of shape ``(N, n)``).
    ``normalise``: the quaternion is off unit length (printed digits) and is divided by
    its length on purpose; ``project``: the matrix is off orthonormal (printed digits)
    and is projected onto the nearest rotation, said in a comment.  The snippet ends
    with ``corrected``, the numbers in the stated reading, and ``R``, ``t``.
    """
    t_read, s_read = slip.true, slip.stated
    tr = "np.swapaxes({0}, -1, -2)" if batch else "{0}.T"
    mv = "np.einsum('...ab,...b->...a', {0}, {1})" if batch else "{0} @ {1}"
    sl = "numbers[..., {0}]" if batch else "numbers[{0}]"
    lines = ["import numpy as np", "import posekit as pk", ""]
    if batch:
        lines.append("numbers = np.asarray(logged_numbers, dtype=float)  # (N, n): one pose per row")
    else:
        lines.append(f"numbers = np.array({_number_list(numbers)})")
    lines.append(f"# the numbers as they were written: {t_read.describe()}")
    c = t_read.convention
    rk = t_read.rotation_kind
    has_t = t_read.has_translation
    improper_raw = slip.improper
    if rk == "matrix":
        rows = 4 if t_read.count == 16 else 3
        shape = "(4, 4)" if t_read.count == 16 else ("(3, 4)" if t_read.count == 12 else "(3, 3)")
        if improper_raw or project:
            if batch:
                lead = "numbers.shape[:-1] + "
                if t_read.count == 9:
                    target = "(3, 3)"
                else:
                    target = f"({rows}, 4)"
                if c.layout == "column-major":
                    flipped = "(3, 3)" if t_read.count == 9 else f"(4, {rows})"
                    lines.append(f"M = np.swapaxes(numbers.reshape({lead}{flipped}), -1, -2)")
                else:
                    lines.append(f"M = numbers.reshape({lead}{target})")
            else:
                order = ', order="F"' if c.layout == "column-major" else ""
                lines.append(f"M = np.reshape(numbers, {shape}{order})")
            why = ("  # read as written: the block is a reflection until the remap is undone" if improper_raw
                   else "")
            lines.append(("R, t = M[..., :3, :3], M[..., :3, 3]" if has_t else "R = M") + why)
            if c.direction == "child-from-parent":
                lines.append("R = " + tr.format("R") + "  # child-from-parent: invert the transform")
                if has_t:
                    lines.append("t = -" + mv.format("R", "t"))
        elif has_t:
            lines.append(f'T = pk.read_transform(numbers, "matrix", "{t_read.code_text()}")'.replace(', ""', ""))
            lines.append("R, t = T[..., :3, :3], T[..., :3, 3]")
        else:
            lines.append(f'R = pk.read_rotation(numbers, "matrix", "{t_read.code_text()}")'.replace(', ""', ""))
    else:
        norm = ", normalise=True" if normalise else ""
        if t_read.kind.startswith("position-"):
            rot_i, pos_i = ("3:", ":3") if t_read.position_first else (":-3", "-3:")
            inner = t_read.with_fields(direction="parent-from-child")
            lines.append(f'R = pk.read_rotation({sl.format(rot_i)}, "{rk}", "{inner.code_text()}"{norm})'
                         .replace(', ""', ""))
            lines.append(f"t = {sl.format(pos_i)}")
            if c.direction == "child-from-parent":
                lines.append("R = " + tr.format("R") + "  # child-from-parent: invert the transform")
                lines.append("t = -" + mv.format("R", "t"))
        else:
            lines.append(f'R = pk.read_rotation(numbers, "{rk}", "{t_read.code_text()}"{norm})'.replace(', ""', ""))
    lines.append("# undo the slip")
    if slip.transposed:
        lines.append("R = " + tr.format("R") + "  # the rotation block was written transposed")
    if slip.parent_remap or slip.child_remap:
        lines.append(f"P = {format_matrix(REMAPS[slip.parent_remap])}  # parent remap: p_written = P p_true")
        lines.append(f"Q = {format_matrix(REMAPS[slip.child_remap])}  # child remap: R_written = P R_true Q")
        lines.append("R = P.T @ R @ Q.T")
        if has_t:
            lines.append("t = " + mv.format("P.T", "t"))
    if has_t and slip.length_scale != 1.0:
        lines.append(f"t = t * {slip.length_scale:g}  # "
                     + ("written in millimetres" if slip.length_scale < 1 else "written in metres, read as mm"))
    if has_t and slip.translation_frame == "child-axes":
        lines.append("t = " + mv.format("R", "t") + "  # the translation was in the child frame's axes")
    elif has_t and slip.translation_frame == "inverse-translation":
        lines.append("t = -" + mv.format("R", "t") + "  # the translation was the inverse transform's")
    if project:
        lines.append("R = pk.nearest_rotation(R).rotation  # the printed digits are off orthonormal: nearest rotation")
    lines.append(f"# written back in your reading: {s_read.describe()}")
    sc = s_read.code_text()
    carg = f', "{sc}"' if sc else ""
    srk = s_read.rotation_kind
    if s_read.kind == "transform":
        if s_read.count == 16:
            lines.append(f'corrected = pk.write_transform(pk.make_transform(R, t), "matrix"{carg}, flat=True)')
        else:
            lines.append(f'M = pk.write_transform(pk.make_transform(R, t), "matrix"{carg})[..., :3, :]')
            if s_read.convention.layout == "column-major":
                lines.append("corrected = np.swapaxes(M, -1, -2).reshape(M.shape[:-2] + (12,))")
            else:
                lines.append("corrected = M.reshape(M.shape[:-2] + (12,))")
    elif s_read.kind.startswith("position-"):
        if not has_t:
            lines.append("t = np.zeros(R.shape[:-2] + (3,))")
        if srk == "rotation-vector":
            inner = s_read.with_fields(direction="parent-from-child").code_text()
            iarg = f', "{inner}"' if inner else ""
            if s_read.convention.direction == "child-from-parent":
                lines.append("R, t = " + tr.format("R") + ", -" + mv.format(tr.format("R"), "t"))
            lines.append(f'rv = pk.write_rotation(R, "rotation-vector"{iarg})')
            parts = "[t, rv]" if s_read.position_first else "[rv, t]"
        else:
            lines.append(f'w = pk.write_transform(pk.make_transform(R, t), "{s_read.kind}"{carg})')
            parts = None if s_read.position_first else "[w[..., 3:], w[..., :3]]"
            if parts is None:
                lines.append("corrected = w")
        if parts is not None:
            lines.append(f"corrected = np.concatenate({parts}, axis=-1)")
    elif srk == "matrix":
        lines.append(f'corrected = pk.write_rotation(R, "matrix"{carg}, flat=True)')
    else:
        lines.append(f'corrected = pk.write_rotation(R, "{srk}"{carg})')
    return "\n".join(lines)
