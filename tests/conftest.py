"""Shared fixtures of the test suite."""
import pytest


@pytest.fixture(scope="module")
def material():
    """A small synthetic scene and data set for the app (fast; see diskexplorer.testing)."""
    from diskexplorer.testing import synthetic_data, synthetic_scene

    scene = synthetic_scene()
    return scene, synthetic_data(scene)
