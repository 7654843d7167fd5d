"""Shared fixtures of the sound tests."""

from __future__ import annotations

import pytest

import hearnav.sounds as sounds


@pytest.fixture
def scratch_names():
    """Names a test registers; every one still registered afterwards is removed again."""
    names: list[str] = []
    yield names
    for name in names:
        if name in sounds.categories():
            sounds.unregister_category(name)
