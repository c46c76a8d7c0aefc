"""What one recomputation produces for one scene: the judgement and every model view."""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .model_views import sed_curves, spectrum_wavelengths, vis2_curve

__all__ = ["Frame", "make_frame", "model_curve"]


@dataclass
class Frame:
    """What one recomputation produced for one scene.

    Attributes
    ----------
    scene : Scene
    result : ComparisonResult or None
        None without data.
    sed : dict
        SED components (Jy) on :data:`~diskexplorer.app.state.model_views.SED_WAVELENGTHS`.
    spectrum : dict
        SED components (Jy) at the spectrum figure's wavelengths.
    curve : tuple
        (spatial frequency Mλ, V² (nwl, n), wavelengths µm, position angle deg).
    profiles : xarray.Dataset or None
    image : xarray.DataArray or None
    wavelength_vis2 : ndarray
        Wavelengths of the V² points (µm), for correlated-flux spectra.
    """

    scene: object
    result: object = None
    sed: dict = field(default_factory=dict)
    spectrum: dict = field(default_factory=dict)
    curve: tuple = None
    profiles: object = None
    image: object = None
    wavelength_vis2: np.ndarray = None


def model_curve(scene, view, position_angle):
    """The continuous model V² along ``position_angle`` (degrees east of north) over the data's range.

    Returns
    -------
    tuple
        (spatial frequency Mλ, V² (nwl, n), wavelengths µm, position angle deg).
    """
    freq, v2 = vis2_curve(scene, position_angle, view.freq_max, view.curve_wavelengths)
    return freq, v2, view.curve_wavelengths, position_angle


def make_frame(scene, view, position_angle):
    """Judge ``scene`` against the data of ``view`` and compute its SED, spectrum and V² curve.

    Parameters
    ----------
    scene : Scene
    view : DataView
        The filtered data (:mod:`~diskexplorer.app.state.data_view`).
    position_angle : float
        Of the continuous V² curve, degrees east of north.

    Returns
    -------
    Frame
        Without image and profiles (computed while their page shows).
    """
    result = view.comparison.compare(scene) if view.comparison.kinds else None
    if result is not None and result.spectrum:
        spectrum = result.spectrum
    else:
        spectrum = scene.sed_components(spectrum_wavelengths(view))
    return Frame(scene=scene, result=result, sed=sed_curves(scene), spectrum=spectrum,
                 curve=model_curve(scene, view, position_angle),
                 wavelength_vis2=(view.vis2["wavelength"] if view.vis2 is not None else np.zeros(0)))
