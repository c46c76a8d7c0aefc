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

__all__ = ["ParameterSpec", "parameter", "parameter_specs", "validate_parameters", "check_parameter",
           "DEFAULT_DIGITS", "round_significant"]

#: Significant digits a value is shown with unless its declaration says otherwise: enough
#: for any slider step (≥ 1/300 of the range), and short enough for the app's number boxes.
DEFAULT_DIGITS = 4


def round_significant(value, digits):
    """``value`` rounded to ``digits`` significant digits (0, inf and nan pass unchanged).

    Examples
    --------
    >>> round_significant(0.347612, 4), round_significant(1483.27, 4)
    (0.3476, 1483.0)
    """
    x = float(value)
    if x == 0 or not math.isfinite(x):
        return x
    return float(f"{x:.{int(digits)}g}")


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
    digits : int
        Significant digits the value is displayed with (number boxes, slider value
        text); the value itself is never rounded.
    """

    name: str
    unit: str
    label: str
    description: str
    valid: tuple
    closed: tuple
    bounds: tuple
    scale: str = "linear"
    digits: int = DEFAULT_DIGITS

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

    def rounded(self, value) -> float:
        """``value`` rounded to this parameter's display digits (:attr:`digits`)."""
        return round_significant(value, self.digits)


def parameter(default, *, unit, label, description, valid=(-math.inf, math.inf),
              closed=(False, False), bounds=None, scale="linear", digits=DEFAULT_DIGITS):
    """Declare a numeric dataclass field with its :class:`ParameterSpec` in the metadata."""
    spec = dict(unit=unit, label=label, description=description, valid=tuple(valid),
                closed=tuple(closed), bounds=tuple(bounds if bounds is not None else valid),
                scale=scale, digits=int(digits))
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
