"""Dust opacity inputs for rings: the protocol, κ tables and an analytic power law.

An *opacity* is any hashable object with a method ``kappa(wavelength)`` returning the
mass absorption coefficient κ_abs in cm² g⁻¹ at wavelengths in µm, and a short
``label``. Rings accept an opacity object, a κ table (path or (N, 2) array), or any
specification that a registered resolver understands (the dust library registers one
for species names and mixtures; physics itself imports nothing of ours).
"""
from __future__ import annotations

import os
from dataclasses import dataclass
from typing import Callable, Protocol, runtime_checkable

import numpy as np

from ..errors import DustError

__all__ = [
    "Opacity",
    "KappaTable",
    "PowerLawOpacity",
    "as_opacity",
    "register_opacity_resolver",
    "OpacityPart",
    "opacity_parts",
    "DEFAULT_SUBLIMATION_TEMPERATURE",
]

#: Sublimation temperature (K) of a species that declares none: 1500 K, the usual
#: assumption for silicates (``tests/reference/CHECK_VALUES.md`` §10, FROM MEMORY there).
DEFAULT_SUBLIMATION_TEMPERATURE = 1500.0


@runtime_checkable
class Opacity(Protocol):
    """What a ring needs from its dust: κ_abs(λ) in cm² g⁻¹ for λ in µm."""

    label: str

    def kappa(self, wavelength) -> np.ndarray: ...


class KappaTable:
    """A tabulated mass absorption coefficient, interpolated linearly in log κ – log λ.

    Parameters
    ----------
    wavelength : array_like
        Strictly increasing wavelengths in µm.
    kappa : array_like
        κ_abs in cm² g⁻¹ (> 0).
    label : str
        Name shown in the app and in exported documents.
    source : str, optional
        Where the table came from (a path or citation), kept for provenance.

    Notes
    -----
    Outside the tabulated range κ is extended as a power law through the two end
    points of the table (a documented extension: the slope of the last interval),
    because dust emissivities at the far ends are power laws to a good approximation.
    Compares by identity, so a ring holding a table hashes cheaply.
    """

    def __init__(self, wavelength, kappa, label="kappa table", source=None):
        lam = np.asarray(wavelength, dtype=float)
        kap = np.asarray(kappa, dtype=float)
        where = f" ({source})" if source else ""
        if lam.ndim != 1 or lam.shape != kap.shape or lam.size < 2:
            raise DustError(f"κ table{where}: need two equal-length columns with at least 2 rows, "
                            f"got shapes {lam.shape} and {kap.shape}")
        if not (np.all(np.isfinite(lam)) and np.all(np.isfinite(kap))):
            raise DustError(f"κ table{where}: non-finite wavelength or κ values")
        if np.any(lam <= 0):
            raise DustError(f"κ table{where}: wavelengths must be > 0 µm")
        if np.any(np.diff(lam) <= 0):
            row = int(np.argmax(np.diff(lam) <= 0)) + 2
            raise DustError(f"κ table{where}: wavelengths must increase strictly (row {row})")
        if np.any(kap <= 0):
            row = int(np.argmax(kap <= 0)) + 1
            raise DustError(f"κ table{where}: κ must be > 0 cm2/g (row {row}: {kap[row - 1]!r})")
        self.wavelength = lam
        self.values = kap
        self.label = label
        self.source = source
        self._loglam = np.log(lam)
        self._logkap = np.log(kap)

    @classmethod
    def from_file(cls, path, label=None):
        """Read a two-column text table (wavelength µm, κ_abs cm² g⁻¹; ``#`` comments)."""
        path = os.fspath(path)
        try:
            arr = np.loadtxt(path, comments="#", ndmin=2)
        except OSError as exc:
            raise DustError(f"{path}: cannot read κ table ({exc.strerror or type(exc).__name__})") from None
        except ValueError:
            # numpy's message quotes the offending text; a typed path may name any readable file.
            raise DustError(f"{path}: κ table is not numeric (two columns of numbers expected: "
                            "wavelength µm, κ cm² g⁻¹)") from None
        if arr.shape[1] < 2:
            raise DustError(f"{path}: κ table needs 2 columns (wavelength µm, κ cm2/g), found {arr.shape[1]}")
        return cls(arr[:, 0], arr[:, 1], label=label or os.path.basename(path), source=path)

    def kappa(self, wavelength):
        """κ_abs in cm² g⁻¹ at ``wavelength`` (µm)."""
        x = np.log(np.asarray(wavelength, dtype=float))
        y = np.interp(x, self._loglam, self._logkap)
        lo = x < self._loglam[0]
        hi = x > self._loglam[-1]
        if np.any(lo):
            s = (self._logkap[1] - self._logkap[0]) / (self._loglam[1] - self._loglam[0])
            y = np.where(lo, self._logkap[0] + s * (x - self._loglam[0]), y)
        if np.any(hi):
            s = (self._logkap[-1] - self._logkap[-2]) / (self._loglam[-1] - self._loglam[-2])
            y = np.where(hi, self._logkap[-1] + s * (x - self._loglam[-1]), y)
        return np.exp(y)

    @property
    def wavelength_nodes(self):
        """The tabulated wavelengths (µm): quadratures over λ include them."""
        return self.wavelength

    def __repr__(self):
        return (f"KappaTable(label={self.label!r}, {self.wavelength.size} rows, "
                f"{self.wavelength[0]:g}–{self.wavelength[-1]:g} µm)")


@dataclass(frozen=True)
class PowerLawOpacity:
    """Analytic opacity κ(λ) = κ_ref (λ/λ_ref)^(−β).

    Parameters
    ----------
    kappa_ref : float
        κ_abs at ``wavelength_ref`` in cm² g⁻¹.
    wavelength_ref : float
        Reference wavelength in µm.
    beta : float
        Spectral index β (κ ∝ λ^−β).
    """

    kappa_ref: float = 1000.0
    wavelength_ref: float = 10.0
    beta: float = 1.0

    def __post_init__(self):
        if not (np.isfinite(self.kappa_ref) and self.kappa_ref > 0):
            raise DustError(f"PowerLawOpacity.kappa_ref = {self.kappa_ref!r} cm2/g; expected > 0")
        if not (np.isfinite(self.wavelength_ref) and self.wavelength_ref > 0):
            raise DustError(f"PowerLawOpacity.wavelength_ref = {self.wavelength_ref!r} µm; expected > 0")
        if not np.isfinite(self.beta):
            raise DustError(f"PowerLawOpacity.beta = {self.beta!r}; expected a finite number")

    @property
    def label(self):
        return f"κ ∝ λ^-{self.beta:g}"

    def kappa(self, wavelength):
        lam = np.asarray(wavelength, dtype=float)
        return self.kappa_ref * (lam / self.wavelength_ref) ** (-self.beta)


_RESOLVERS: list[Callable[[object], object | None]] = []


def register_opacity_resolver(resolver):
    """Register ``resolver(spec) -> Opacity | None`` for specs this module does not know.

    The dust library registers one for species names and mixtures. A resolver returns
    ``None`` to pass, or raises :class:`~diskexplorer.errors.DustError` for a spec it
    recognises but cannot build.
    """
    if resolver not in _RESOLVERS:
        _RESOLVERS.append(resolver)
    return resolver


def as_opacity(spec):
    """Turn a ring's ``dust`` argument into an opacity object (or ``None``: optically thick).

    Accepts ``None``, an object with ``kappa`` and ``label``, a path to a κ table,
    an (N, 2) array of (λ µm, κ cm² g⁻¹), or anything a registered resolver builds
    (species names, mixtures).
    """
    if spec is None:
        return None
    if hasattr(spec, "kappa") and hasattr(spec, "label"):
        return spec
    for resolver in _RESOLVERS:
        found = resolver(spec)
        if found is not None:
            return found
    if isinstance(spec, (str, os.PathLike)) and os.path.isfile(os.fspath(spec)):
        return KappaTable.from_file(spec)
    if isinstance(spec, np.ndarray) or isinstance(spec, (list, tuple)):
        try:
            arr = np.asarray(spec, dtype=float)
        except (TypeError, ValueError):
            arr = None
        if arr is not None and arr.ndim == 2 and arr.shape[1] == 2:
            return KappaTable(arr[:, 0], arr[:, 1], label="κ table")
    if isinstance(spec, str):
        raise DustError(f"dust {spec!r} is neither a known species nor a readable κ table file")
    raise DustError(f"cannot use {type(spec).__name__} {spec!r:.80} as dust: expected None, an opacity, "
                    "a κ table path or (N, 2) array, a species name or a mixture")


@dataclass(frozen=True)
class OpacityPart:
    """One grain species of a ring's dust: its name, mass fraction and own opacity.

    Attributes
    ----------
    name : str
        Unique within the dust (the species name; with size and shape where a species
        appears twice).
    fraction : float
        Mass fraction in the mixture (the parts sum to 1).
    opacity : Opacity or None
        κ_abs of this species alone (cm² g⁻¹); ``None`` for an opaque blackbody ring.
    sublimation_temperature : float
        Its declared default sublimation temperature in K.
    """

    name: str
    fraction: float
    opacity: object
    sublimation_temperature: float = DEFAULT_SUBLIMATION_TEMPERATURE


def opacity_parts(opacity):
    """The species of a ring's dust as a tuple of :class:`OpacityPart`.

    An opacity that knows its species (a dust mixture) lists them through its
    ``species_parts()``; any other opacity is one species (its ``label``), and ``None``
    (an opaque ring) is one grey "blackbody" part. Sublimation temperatures come from the
    part's ``sublimation_temperature`` attribute, else
    :data:`DEFAULT_SUBLIMATION_TEMPERATURE`.
    """
    if opacity is None:
        return (OpacityPart("blackbody", 1.0, None),)
    parts = getattr(opacity, "species_parts", None)
    if parts is not None:
        return tuple(parts())
    t_sub = getattr(opacity, "sublimation_temperature", None)
    return (OpacityPart(str(getattr(opacity, "label", "dust")), 1.0, opacity,
                        DEFAULT_SUBLIMATION_TEMPERATURE if t_sub is None else float(t_sub)),)
