"""Fixtures for the quantizer tests."""

import pytest

from quantize_models import small_model_dict
from scorecard.model import model_from_dict


@pytest.fixture
def small_model():
    return model_from_dict(small_model_dict())
