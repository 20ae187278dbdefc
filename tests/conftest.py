"""Shared fixtures: the bundled database and a cantera phase built from the same data."""
from __future__ import annotations

import numpy as np
import pytest
import yaml

from eqdesign.thermo import SpeciesDatabase, bundled_database


@pytest.fixture(scope="session")
def db() -> SpeciesDatabase:
    return bundled_database()
