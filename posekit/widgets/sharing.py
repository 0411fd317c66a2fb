"""Saving and sharing from every widget: state file, Python code cell, offline HTML report.

Each widget implements three small methods — ``to_state()``, ``from_state(state)``
(a classmethod) and ``code_cell()`` — and shows a :class:`SharePanel` that calls
them.  The panel writes files only where the user says (a path box), and says what
it wrote.
"""

from __future__ import annotations

import html
from pathlib import Path

import ipywidgets as w

from ..analysis.state import State, float_literal, save_state, state_to_json
from ..core.errors import PoseInputError

__all__ = ["SharePanel", "python_call"]


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
    raise PoseInputError(f"cannot write {type(v).__name__} into a code cell")


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
            self.message.value = f"<span style='color:#b2182b'>Not done: {html.escape(str(exc))}</span>"

    def _stem(self) -> Path:
        name = self.name_box.value.strip()
        if not name or any(c in name for c in "\0"):
            raise PoseInputError(f"file name: got {name!r}; type a file name such as 'camera-mount-bug'")
        return Path(name)

    def _save(self) -> None:
        path = self._stem().with_suffix(".json")
        save_state(self.owner.to_state(), path)
        self.message.value = f"state written to <code>{html.escape(str(path.resolve()))}</code>"

    def _show_code(self) -> None:
        self.code.value = self.owner.code_cell()
        self.code.layout.display = None
        self.message.value = "select the code below and copy it into a new cell; it rebuilds this widget exactly"

    def _report(self) -> None:
        from ..view.report import write_report

        path = self._stem().with_suffix(".html")
        state = self.owner.to_state()
        write_report(state, path)
        self.message.value = f"report written to <code>{html.escape(str(path.resolve()))}</code>"


def state_json(owner) -> str:
    """The owner's state as JSON text (for tests and for copying)."""
    state = owner.to_state()
    if not isinstance(state, State):
        raise PoseInputError("to_state() must return a posekit State")
    return state_to_json(state)
