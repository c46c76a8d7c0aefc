"""Observables of a scene: visibilities, closure phases, SED, spectra, profiles, images."""
from .bandpass import ChannelEvaluator, ChannelSampling
from .engine import Evaluation, Evaluator, Sampling, direct_visibility
from .observer import Observer, Prediction
from .image import image_visibility, model_image, point_source_visibility
from .profiles import radial_profiles
from .scene import Scene, evaluator_for, ring_labels
from .spectrum import has_dust_opacity, model_silicate_band, normalized_silicate_band, silicate_continuum

__all__ = [
    "Scene", "Observer", "Prediction", "Evaluator", "Evaluation", "Sampling", "ChannelEvaluator", "ChannelSampling", "direct_visibility", "evaluator_for", "ring_labels",
    "model_image", "image_visibility", "point_source_visibility", "radial_profiles",
    "normalized_silicate_band", "silicate_continuum", "model_silicate_band", "has_dust_opacity",
]
