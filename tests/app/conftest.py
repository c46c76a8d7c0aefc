"""Fixtures of the widget tests: an explorer on the ``material`` fixture's scene and data."""
import pytest

from explorer_helpers import make_app


@pytest.fixture
def app(material):
    """An explorer on ``material`` (a module may override ``material``), recomputed by hand."""
    return make_app(material)
