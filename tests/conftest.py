"""Shared fixtures and hypothesis settings."""

from __future__ import annotations

import os

import pytest
from hypothesis import HealthCheck, settings

settings.register_profile(
    "ci", max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow]
)
settings.register_profile(
    "dev", max_examples=30, deadline=None, suppress_health_check=[HealthCheck.too_slow]
)
settings.load_profile("ci" if os.environ.get("CI") else "dev")


@pytest.fixture(scope="session")
def am15g():
    import gapmatch as gm

    return gm.standard_spectrum("AM1.5G")


@pytest.fixture(scope="session")
def references():
    """High-precision reference values (``tests/data/references.json``), computed with
    mpmath by ``tests/data/make_references.py`` without gapmatch; see that script."""
    import json
    from pathlib import Path

    return json.loads((Path(__file__).parent / "data" / "references.json").read_text())
