"""Fixtures of the widget tests: an explorer on the ``material`` fixture's scene and data."""
import pytest

from explorer_helpers import make_app


@pytest.fixture
def app_scene():
    """The scene the ``app`` fixture starts from: None for ``material``'s own (a module may override it)."""
    return None


@pytest.fixture
def app(material, app_scene):
    """An explorer on ``material`` (a module may override ``material``), recomputed by hand."""
    return make_app(material, scene=app_scene)
