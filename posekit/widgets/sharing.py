"""Saving and sharing from every widget: state file, Python code cell, offline HTML report.

Each widget implements three small methods — ``to_state()``, ``from_state(state)``
(a classmethod) and ``code_cell()`` — and shows a :class:`SharePanel` that calls
them.  The panel writes files only where the user says (a path box), and says what
it wrote.  Files are written in one step (:func:`posekit.io.limits.write_atomic`), so a
failed save leaves an earlier file as it was; every message shown is HTML-escaped with
hidden characters shown as ``<U+XXXX>``.
"""

from __future__ import annotations

import html
import unicodedata
from pathlib import Path

import ipywidgets as w

from ..core.errors import PoseInputError, WrongTypeError, excerpt, isolate_controls
from ..io.limits import NAME_LIMIT
from ..io.state import State, float_literal, save_state, state_to_json

__all__ = ["SharePanel", "python_call", "ShareNameError"]


class ShareNameError(PoseInputError):
    """The file name typed into a share panel cannot name a file."""


def _literal(v) -> str:
    if isinstance(v, bool):
        return repr(v)
    if isinstance(v, float):
        return float_literal(v)
    if isinstance(v, int):
        return repr(v)
    if isinstance(v, str):
        return repr(v)
    if isinstance(v, (tuple, list)):
        inner = ", ".join(_literal(x) for x in v)
        return f"({inner},)" if isinstance(v, tuple) and len(v) == 1 else (f"({inner})" if isinstance(v, tuple)
                                                                           else f"[{inner}]")
    raise WrongTypeError(f"code cell: cannot write a {type(v).__name__} as a Python literal; expected true/false, "
                         "a number, text or a list or tuple of those")


def python_call(module: str, name: str, settings: dict, versions: dict, variable: str = "widget") -> str:
    """Source of a notebook cell that imports ``name`` and builds it from ``settings``.

    Floats are written with their shortest round-trip repr, so they come back bit-identical.
    """
    head = (f"# Rebuilds this posekit {name} exactly as it was shared "
            f"(posekit {versions.get('posekit')}, numpy {versions.get('numpy')}, scipy {versions.get('scipy')}).")
    args = "".join(f"    {k}={_literal(v)},\n" for k, v in settings.items())
    return f"{head}\nfrom {module} import {name}\n\n{variable} = {name}(\n{args})\n{variable}\n"


class SharePanel(w.VBox):
    """Buttons to save the owner's state, show its code cell, and write an offline HTML report."""

    def __init__(self, owner, default_name: str = "posekit-share"):
        self.owner = owner
        self.name_box = w.Text(value=default_name, description="file name", layout=w.Layout(width="300px"))
        self.name_box.add_class("posekit-share-name")
        self.save_button = w.Button(description="save state file", icon="save", tooltip="write <name>.json")
        self.code_button = w.Button(description="show code cell", icon="code",
                                    tooltip="Python that rebuilds exactly this widget")
        self.report_button = w.Button(description="write HTML report", icon="file",
                                      tooltip="one standalone file, no network needed to view it")
        for b, css in ((self.save_button, "save"), (self.code_button, "code"), (self.report_button, "report")):
            b.add_class(f"posekit-share-{css}")
            b.layout.width = "auto"
        self.code = w.Textarea(layout=w.Layout(width="100%", height="150px", display="none"))
        self.code.add_class("posekit-share-code")
        self.message = w.HTML()
        self.message.add_class("posekit-share-message")
        self.save_button.on_click(lambda _: self._guard(self._save))
        self.code_button.on_click(lambda _: self._guard(self._show_code))
        self.report_button.on_click(lambda _: self._guard(self._report))
        super().__init__([w.HTML("<b>Share</b> — for the bug report"),
                          w.HBox([self.name_box, self.save_button, self.code_button, self.report_button]),
                          self.message, self.code])

    def _guard(self, action) -> None:
        try:
            action()
        except (PoseInputError, OSError) as exc:
            self.message.value = f"<span style='color:#b2182b'>Not done: {_safe(str(exc))}</span>"

    def _stem(self) -> Path:
        name = self.name_box.value.strip()
        accepted = (f"a file name such as 'camera-mount-bug' (1 to {NAME_LIMIT} characters, no control, "
                    "format or line-separator characters)")
        if not name:
            raise ShareNameError(f"file name box: got empty text; expected {accepted}")
        if len(name) > NAME_LIMIT:
            raise ShareNameError(f"file name box: got {len(name)} characters {excerpt(name, 30)}; expected {accepted}")
        for i, ch in enumerate(name):
            if unicodedata.category(ch) in ("Cc", "Cf", "Cs", "Zl", "Zp"):
                raise ShareNameError(f"file name box: got {excerpt(name, 40)}, holding U+{ord(ch):04X} at position "
                                     f"{i}; expected {accepted}")
        return Path(name)

    def _save(self) -> None:
        path = self._stem().with_suffix(".json")
        save_state(self.owner.to_state(), path)
        self.message.value = f"state written to <code>{_safe(str(path.resolve()))}</code>"

    def _show_code(self) -> None:
        self.code.value = self.owner.code_cell()
        self.code.layout.display = None
        self.message.value = "select the code below and copy it into a new cell; it rebuilds this widget exactly"

    def _report(self) -> None:
        from ..view.report import write_report

        path = self._stem().with_suffix(".html")
        state = self.owner.to_state()
        write_report(state, path)
        self.message.value = f"report written to <code>{_safe(str(path.resolve()))}</code>"


def _safe(text: str) -> str:
    """Text for an HTML message: hidden characters shown as <U+XXXX>, then escaped."""
    return html.escape(isolate_controls(text))


def state_json(owner) -> str:
    """The owner's state as JSON text (for tests and for copying)."""
    state = owner.to_state()
    if not isinstance(state, State):
        raise WrongTypeError(f"{type(owner).__name__}.to_state(): got {type(state).__name__}; expected a posekit State")
    return state_to_json(state)
