"""Shared fixtures: strict floating point, seeded randomness, small standard models."""

import numpy as np
import pytest


@pytest.fixture(autouse=True)
def strict_floats():
    old = np.seterr(all="raise", under="ignore")  # gradual underflow of pulse tails is harmless
    yield
    np.seterr(**old)


@pytest.fixture
def rng():
    return np.random.default_rng(20261201)
