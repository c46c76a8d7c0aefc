"""Unit handling at the document edge: values with units → floats in our internal units."""
from __future__ import annotations

import math

from astropy import units as u

from ..errors import SeedError

__all__ = ["unit_factor", "to_internal", "quantity"]


def _parse(unit, where):
    try:
        return u.Unit(unit) if unit != "" else u.dimensionless_unscaled
    except (ValueError, TypeError):
        raise SeedError(f"{where}: unit {unit!r} is not a unit astropy understands") from None


def _describe(unit):
    return repr(unit) if unit else "dimensionless"


def to_internal(values, unit, target, where):
    """Convert numbers given in ``unit`` to ``target`` (both astropy unit strings).

    Parameters
    ----------
    values : float or sequence of float
    unit : str
        The unit the document gives ("" dimensionless).
    target : str
        The declared (internal) unit.
    where : str
        Path of the entry, for messages.

    Returns
    -------
    float or list of float
        Unchanged (bit for bit) when ``unit == target``.

    Raises
    ------
    SeedError
        Unparseable unit, or a unit of another physical type (e.g. "m" for a temperature).

    Notes
    -----
    Temperatures convert with astropy's temperature equivalency (°C → K adds 273.15).
    """
    scalar = not isinstance(values, (list, tuple))
    vals = [values] if scalar else list(values)
    if unit == target:
        out = [float(v) for v in vals]
    else:
        src, dst = _parse(unit, where), _parse(target, where)
        try:
            out = [float((v * src).to_value(dst, equivalencies=u.temperature())) for v in vals]
        except u.UnitConversionError:
            raise SeedError(f"{where}: unit {_describe(unit)} does not convert to {_describe(target)} "
                            f"(expected a {dst.physical_type})") from None
    return out[0] if scalar else out


def unit_factor(value, width, unit, target, where):
    """Convert a width (e.g. a prior's sigma) at ``value``: difference of converted ends."""
    a, b = to_internal([value, value + width], unit, target, where)
    return b - a


def quantity(value, unit):
    """The document form of a number with a unit: ``{"value": value, "unit": unit}``."""
    if not math.isfinite(value):
        raise SeedError(f"cannot write the non-finite value {value!r} {unit}")
    return {"value": float(value), "unit": unit}
