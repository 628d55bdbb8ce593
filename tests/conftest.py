"""Test-wide set-up: Qt offscreen when no display is present; seeded generators."""

from __future__ import annotations

import os
import sys

import numpy as np
import pytest

if sys.platform.startswith("linux") and not os.environ.get("DISPLAY") and not os.environ.get("WAYLAND_DISPLAY"):
    os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")


@pytest.fixture
def rng():
    """A seeded generator; each test that asks gets the same stream."""
    return np.random.default_rng(20261201)
