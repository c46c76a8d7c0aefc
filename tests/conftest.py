"""Shared fixtures of the test suite."""
import warnings

import pytest


@pytest.fixture(scope="module")
def material():
    """A small synthetic scene and data set of the app (fast; see diskexplorer.app.demo)."""
    from diskexplorer.app.demo import fallback_data, fallback_scene

    scene = fallback_scene()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # the synthetic sets share an array name on purpose
        data = fallback_data(scene)
    return scene, data
