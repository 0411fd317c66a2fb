"""Fixtures for the real-browser tests: one JupyterLab + headless Chromium per test session."""

from __future__ import annotations

import sys
from pathlib import Path

import pytest

sys.path.insert(0, str(Path(__file__).resolve().parent))

from harness import BrowserMissing, LabSession, find_chromium  # noqa: E402

ARTIFACTS = Path(__file__).resolve().parents[2] / "artifacts"


def pytest_collection_modifyitems(items):
    browser = []
    for item in items:
        if "tests/browser" in str(item.fspath).replace("\\", "/"):
            item.add_marker(pytest.mark.browser)
            browser.append(item)
    # browser tests run last: Playwright's synchronous API keeps an event loop running in the test
    # process, which the in-process widget tests (asyncio.run, kernel-like deferral) must not see
    rest = [item for item in items if item not in browser]
    items[:] = rest + browser


@pytest.fixture(scope="session")
def lab():
    try:
        find_chromium()
    except BrowserMissing as exc:
        pytest.fail(str(exc), pytrace=False)
    session = LabSession().start()
    try:
        yield session
    finally:
        session.stop()


@pytest.fixture(scope="session")
def artifacts() -> Path:
    ARTIFACTS.mkdir(exist_ok=True)
    return ARTIFACTS
