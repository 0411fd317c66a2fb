"""posekit: find the convention that broke a pose.

``import posekit`` loads only the numpy core; the analysis (scipy), view (plotly)
and widget (ipywidgets) layers load on first attribute access.
"""

from __future__ import annotations

import importlib

from .core import *  # noqa: F401,F403
from .core import __all__ as _core_all

__version__ = "0.1.0"

_LAZY_MODULES = ("analysis", "view", "widgets", "cli", "demo")

__all__ = list(_core_all) + ["__version__"]


def __getattr__(name: str):
    if name in _LAZY_MODULES:
        return importlib.import_module(f".{name}", __name__)
    raise AttributeError(f"module 'posekit' has no attribute {name!r}")
