"""One declaration per model parameter: default, unit, validity, bounds, scale, words.

Each numeric field of a model dataclass is declared with :func:`parameter`; from that
single declaration the project derives construction-time validation, the app's slider
and numeric box, the default bounds of an exported starting point, and labels.
"""
from __future__ import annotations

import functools
import math
from dataclasses import dataclass, field, fields

from ..errors import ParameterError

__all__ = ["ParameterSpec", "parameter", "parameter_specs", "validate_parameters", "check_parameter"]


@dataclass(frozen=True)
class ParameterSpec:
    """Declaration of one scalar model parameter.

    Attributes
    ----------
    name : str
        Field name on the owning dataclass.
    unit : str
        Unit string understood by astropy.units ("" for dimensionless).
    label : str
        Short human label (the app prints it with the unit).
    description : str
        One sentence on what the parameter means.
    valid : (float, float)
        Physically allowed interval; construction outside it raises ParameterError.
    closed : (bool, bool)
        Whether each end of ``valid`` is allowed.
    bounds : (float, float)
        Default exploration and fit range (slider range, default prior bounds).
    scale : {"linear", "log"}
        How the slider and priors treat the parameter.
    """

    name: str
    unit: str
    label: str
    description: str
    valid: tuple
    closed: tuple
    bounds: tuple
    scale: str = "linear"

    def contains(self, value) -> bool:
        lo, hi = self.valid
        lo_ok = value >= lo if self.closed[0] else value > lo
        hi_ok = value <= hi if self.closed[1] else value < hi
        return bool(lo_ok and hi_ok)

    def describe_range(self) -> str:
        lo, hi = self.valid
        left = "[" if self.closed[0] else "("
        right = "]" if self.closed[1] else ")"
        unit = f" {self.unit}" if self.unit else ""
        return f"{left}{lo:g}, {hi:g}{right}{unit}"


def parameter(default, *, unit, label, description, valid=(-math.inf, math.inf),
              closed=(False, False), bounds=None, scale="linear"):
    """Declare a numeric dataclass field with its :class:`ParameterSpec` in the metadata."""
    spec = dict(unit=unit, label=label, description=description, valid=tuple(valid),
                closed=tuple(closed), bounds=tuple(bounds if bounds is not None else valid),
                scale=scale)
    return field(default=default, metadata={"parameter": spec})


def parameter_specs(cls_or_obj) -> dict:
    """The :class:`ParameterSpec` of every declared parameter of a model class, by name."""
    cls = cls_or_obj if isinstance(cls_or_obj, type) else type(cls_or_obj)
    return dict(_specs_of(cls))


@functools.lru_cache(maxsize=None)
def _specs_of(cls):
    # Built once per class: every edit of a scene validates it, many times a second.
    out = {}
    for f in fields(cls):
        meta = f.metadata.get("parameter")
        if meta is not None:
            out[f.name] = ParameterSpec(name=f.name, **meta)
    return out


def validate_parameters(obj, owner=None):
    """Check every declared parameter of ``obj``: a finite real inside its valid range.

    Raises
    ------
    ParameterError
        Naming the owner, the parameter, its value and the allowed range.
    """
    owner = owner or type(obj).__name__
    for name, spec in parameter_specs(obj).items():
        check_parameter(spec, getattr(obj, name), owner)


def check_parameter(spec, value, owner):
    """Raise :class:`ParameterError` unless ``value`` is a finite number inside ``spec.valid``."""
    try:
        x = float(value)
    except (TypeError, ValueError):
        raise ParameterError(f"{owner}.{spec.name} = {value!r} is not a number; "
                             f"allowed range {spec.describe_range()}") from None
    if not math.isfinite(x) or not spec.contains(x):
        unit = f" {spec.unit}" if spec.unit else ""
        raise ParameterError(f"{owner}.{spec.name} = {value!r}{unit} is outside the allowed "
                             f"range {spec.describe_range()} ({spec.description})")
