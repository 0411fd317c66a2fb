"""Fixtures shared by the core tests."""

from __future__ import annotations

import pytest
from conventions import ROUTES

from posekit.core import compiled


@pytest.fixture(params=ROUTES)
def kernel_route(request):
    """Run the test with large batches on one kernel route (compiled loops, or numpy)."""
    with compiled.use(request.param):
        yield request.param
