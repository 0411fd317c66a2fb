"""Real JupyterLab on 127.0.0.1 driven by Python Playwright with the system Chromium.

Used by the browser tests (through tests/browser/conftest.py) and by
benchmarks/bench_widgets.py.  Everything runs on loopback with a fresh token,
fresh JupyterLab settings and a fresh Chromium profile in a temporary folder.
"""

from __future__ import annotations

import json
import os
import shutil
import socket
import subprocess
import sys
import tempfile
import time
import urllib.request
import uuid
from pathlib import Path

CHROMIUM_FLAGS = [
    "--headless=new", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
    "--disable-component-update", "--disable-sync", "--no-first-run", "--disable-quic",
    "--disable-dev-shm-usage",
]


class BrowserMissing(RuntimeError):
    pass


def find_chromium() -> str:
    path = os.environ.get("POSEKIT_CHROMIUM") or shutil.which("chromium") or "/usr/bin/chromium"
    if not (path and os.path.exists(path)):
        raise BrowserMissing("No Chromium found for the browser tests. Install Debian's package "
                             "('apt-get install chromium', which 'make test' does when run as root) "
                             "or set POSEKIT_CHROMIUM to a Chromium binary.")
    return path


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def write_notebook(path: Path, cells: list[str]) -> Path:
    nb = {
        "cells": [{"cell_type": "code", "execution_count": None, "id": uuid.uuid4().hex[:8], "metadata": {},
                   "outputs": [], "source": src} for src in cells],
        "metadata": {"kernelspec": {"display_name": "Python 3 (ipykernel)", "language": "python", "name": "python3"},
                     "language_info": {"name": "python"}},
        "nbformat": 4, "nbformat_minor": 5,
    }
    path.write_text(json.dumps(nb, indent=1))
    return path


class LabSession:
    """Start JupyterLab and a headless Chromium; open and run notebooks in it."""

    def __init__(self, root: Path | None = None):
        self.tmp = Path(tempfile.mkdtemp(prefix="posekit-lab-"))
        self.root = root or (self.tmp / "notebooks")
        self.root.mkdir(parents=True, exist_ok=True)
        self.port = _free_port()
        self.token = uuid.uuid4().hex
        self.server = None
        self.playwright = None
        self.context = None
        self.log_path = self.tmp / "jupyterlab.log"

    # --- server --------------------------------------------------------------------
    def start(self) -> "LabSession":
        chromium = find_chromium()
        settings = self.tmp / "lab-settings"
        notify = settings / "@jupyterlab" / "apputils-extension"
        notify.mkdir(parents=True)
        (notify / "notification.jupyterlab-settings").write_text(
            json.dumps({"fetchNews": "false", "checkForUpdates": False, "doNotDisturbMode": True}))
        env = dict(os.environ)
        env.update({
            "JUPYTERLAB_SETTINGS_DIR": str(settings),
            "JUPYTERLAB_WORKSPACES_DIR": str(self.tmp / "lab-workspaces"),
            "JUPYTER_RUNTIME_DIR": str(self.tmp / "runtime"),
            "JUPYTER_CONFIG_DIR": str(self.tmp / "config"),
            "PYTHONPATH": os.pathsep.join([str(Path(__file__).resolve().parents[2]), env.get("PYTHONPATH", "")]),
        })
        cmd = [sys.executable, "-m", "jupyter", "lab", "--no-browser", f"--port={self.port}",
               "--ServerApp.ip=127.0.0.1", f"--IdentityProvider.token={self.token}",
               f"--ServerApp.root_dir={self.root}", "--ServerApp.open_browser=False",
               "--LabApp.news_url=", "--LabApp.expose_app_in_browser=True", "--ServerApp.port_retries=0"]
        if hasattr(os, "geteuid") and os.geteuid() == 0:
            cmd.append("--allow-root")
        self._log = open(self.log_path, "w")
        self.server = subprocess.Popen(cmd, stdout=self._log, stderr=subprocess.STDOUT, env=env)
        url = f"http://127.0.0.1:{self.port}/api/status?token={self.token}"
        deadline = time.time() + 90
        while True:
            if self.server.poll() is not None:
                raise RuntimeError(f"JupyterLab exited early; log:\n{self.log_path.read_text()[-3000:]}")
            try:
                with urllib.request.urlopen(url, timeout=2) as r:
                    if r.status == 200:
                        break
            except OSError:
                pass
            if time.time() > deadline:
                raise RuntimeError(f"JupyterLab did not answer in 90 s; log:\n{self.log_path.read_text()[-3000:]}")
            time.sleep(0.3)
        from playwright.sync_api import sync_playwright

        self.playwright = sync_playwright().start()
        self.context = self.playwright.chromium.launch_persistent_context(
            str(self.tmp / "chromium-profile"), executable_path=chromium, headless=True, args=CHROMIUM_FLAGS,
            viewport={"width": 1400, "height": 1000})
        return self

    def stop(self) -> None:
        try:
            if self.context is not None:
                self.context.close()
            if self.playwright is not None:
                self.playwright.stop()
        finally:
            if self.server is not None:
                self.server.terminate()
                try:
                    self.server.wait(timeout=20)
                except subprocess.TimeoutExpired:
                    self.server.kill()
            if getattr(self, "_log", None):
                self._log.close()
            shutil.rmtree(self.tmp, ignore_errors=True)

    def __enter__(self):
        return self.start()

    def __exit__(self, *exc):
        self.stop()

    # --- notebooks -----------------------------------------------------------------
    def open_notebook(self, name: str, cells: list[str] | None = None, timeout: float = 90_000):
        """Open ``name`` (written first from ``cells`` if given), run every cell, return the page."""
        if cells is not None:
            write_notebook(self.root / name, cells)
        page = self.context.new_page()
        page.set_default_timeout(timeout)
        self._pages = getattr(self, "_pages", 0) + 1
        # a fresh workspace per page, so no earlier notebook is restored beside this one
        page.goto(f"http://127.0.0.1:{self.port}/lab/workspaces/posekit-{self._pages}/tree/{name}"
                  f"?reset&token={self.token}")
        page.wait_for_selector(".jp-NotebookPanel .jp-Cell", state="attached")
        page.wait_for_function("() => !!window.jupyterapp")
        self.run_all(page)
        return page

    def run_all(self, page, timeout: float = 120_000) -> None:
        """Run every cell through JupyterLab's own command once the kernel is ready."""
        page.wait_for_function(
            "() => { const w = window.jupyterapp.shell.currentWidget; return !!(w && w.sessionContext && "
            "w.sessionContext.session && w.sessionContext.session.kernel && "
            "w.sessionContext.session.kernel.status === 'idle'); }", timeout=timeout)
        page.evaluate("async () => { await window.jupyterapp.shell.currentWidget.sessionContext.ready; "
                      "await window.jupyterapp.commands.execute('notebook:run-all-cells'); }")
        page.wait_for_function(
            "() => { const p = [...document.querySelectorAll('.jp-NotebookPanel .jp-CodeCell .jp-InputPrompt')];"
            " return p.length > 0 && p.every(e => /\\[\\d+\\]/.test(e.textContent)); }", timeout=timeout)

    @staticmethod
    def plot_data(page, selector: str):
        """The ``data`` array plotly.js holds for the first plot under ``selector``."""
        return page.evaluate(
            "(sel) => { const gd = document.querySelector(sel + ' .js-plotly-plot'); if (!gd || !gd.data) return null;"
            " return gd.data.map(t => ({name: t.name, x: t.x ? Array.from(t.x) : null,"
            " y: t.y ? Array.from(t.y) : null, z: t.z ? Array.from(t.z) : null, visible: t.visible})); }",
            selector)
