"""What data a starting point was judged against: files, selections, error floors, weights.

The description is plain data (it goes into the starting-point document under
``"data"``) and can load itself back into a :class:`~diskexplorer.fitting.Comparison`::

    {
      "oifits": [{"path": "night1.fits", "target": null, "bands": ["K"],
                  "wavelength_range": null, "instruments": null, "baseline_range": [20.0, null],
                  "error_floor": {"vis2_relative": 0.05, "phase": 1.0}, "bandpass": true}],
      "photometry": {"path": "sed.csv", "a_v": null, "r_v": 3.1},
      "spectrum": {"path": "nband.csv", "wavelength_range": [7.5, 13.5], "a_v": null, "r_v": 3.1},
      "weights": {"vis2": 1.0, "t3phi": 1.0}
    }

``baseline_range`` is [shortest, longest] projected baseline in m (``null`` for no upper
limit); a closure triangle is kept when all three of its baselines lie inside.

``bandpass`` (default ``true``) averages the model of the file's points over each
channel's EFF_BAND (a top-hat channel, :mod:`diskexplorer.observables.bandpass`);
``false`` compares the monochromatic model at EFF_WAVE. Documents written before the
key existed have no ``bandpass``: they are read with the default, so their data are now
judged with the channel average (χ² can differ slightly from the one they record).

Relative paths are resolved against a base directory: the folder of the document when
it was read from a file, else the current directory.
"""
from __future__ import annotations

import copy
import math
import os
from dataclasses import dataclass, field

from ..errors import SeedError

__all__ = ["describe_loaded_data", "DataDescription", "ERROR_FLOOR_KEYS", "describe_data"]

#: Keyword arguments of :meth:`ObservationSet.with_error_floor` a document may set.
ERROR_FLOOR_KEYS = ("vis2_relative", "vis2_absolute", "phase", "amplitude_relative", "combine")
_OIFITS_KEYS = ("path", "target", "bands", "wavelength_range", "instruments", "baseline_range", "error_floor",
                "bandpass")
_PHOT_KEYS = ("path", "a_v", "r_v")
_SPEC_KEYS = ("path", "wavelength_range", "a_v", "r_v")


def _check_keys(entry, allowed, where):
    if not isinstance(entry, dict):
        raise SeedError(f"{where}: expected an object, got {type(entry).__name__}")
    extra = sorted(set(entry) - set(allowed))
    if extra:
        raise SeedError(f"{where}: unknown key(s) {', '.join(map(repr, extra))}; allowed: "
                        f"{', '.join(allowed)}")
    if "path" not in entry or not isinstance(entry["path"], str) or not entry["path"]:
        raise SeedError(f"{where}: missing field 'path' (a file name)")


def _oifits_entry(e, where):
    _check_keys(e, _OIFITS_KEYS, where)
    out = {"path": e["path"], "target": e.get("target"), "bands": e.get("bands"),
           "wavelength_range": e.get("wavelength_range"), "instruments": e.get("instruments"),
           "baseline_range": _baseline_range(e.get("baseline_range"), f"{where}.baseline_range"),
           "error_floor": dict(e.get("error_floor") or {}),
           "bandpass": e.get("bandpass", True)}
    if not isinstance(out["bandpass"], bool):
        raise SeedError(f"{where}.bandpass = {out['bandpass']!r}: expected true or false")
    extra = sorted(set(out["error_floor"]) - set(ERROR_FLOOR_KEYS))
    if extra:
        raise SeedError(f"{where}.error_floor: unknown key(s) {', '.join(map(repr, extra))}; allowed: "
                        f"{', '.join(ERROR_FLOOR_KEYS)}")
    return out


def _baseline_range(value, where):
    """[lo, hi] in m (hi None: no upper limit), or None; a SeedError names a bad one."""
    if value is None:
        return None
    bad = SeedError(f"{where} = {value!r}: expected [shortest, longest] baseline in m, "
                    "0 <= shortest < longest (longest may be null: no upper limit)")
    if not isinstance(value, (list, tuple)) or len(value) != 2:
        raise bad
    lo, hi = value
    try:
        lo = float(lo)
        hi = None if hi is None else float(hi)
    except (TypeError, ValueError):
        raise bad from None
    if not (math.isfinite(lo) and lo >= 0) or (hi is not None and not (math.isfinite(hi) and hi > lo)):
        raise bad
    return [lo, hi]


def describe_loaded_data(sources, bands=(), instruments=(), baseline_range=(0.0, math.inf), bandpass_off=(),
                         weights=None, target=None):
    """The description of data loaded from files and filtered as the explorer does it.

    The one translation of the explorer's data (its files, band, instrument and baseline
    filters and per-file channel-bandpass switches) into a :class:`DataDescription`: the
    starting-point page writes it into documents and ``diskexplorer evaluate`` reads a
    session through it.

    Parameters
    ----------
    sources : dict
        ``{"oifits": [paths], "photometry": path or None, "spectrum": path or None}``.
    bands, instruments : sequence of str
        Kept for every OIFITS file (empty keeps all).
    baseline_range : (float, float)
        Projected baselines kept, m; ``(0, inf)`` keeps all.
    bandpass_off : collection of str
        OIFITS paths whose model is taken at the channel centres.
    weights : dict, optional
        Weight per data kind.
    target : str, optional
        The target judged (None: chosen when the data are read, see
        :func:`~diskexplorer.data.targets.choose_target`).

    Returns
    -------
    DataDescription
    """
    lo, hi = (float(b) for b in baseline_range)
    baselines = [lo, hi if math.isfinite(hi) else None] if (lo > 0 or math.isfinite(hi)) else None
    off = {str(p) for p in bandpass_off}
    oifits = sources.get("oifits") or []
    oifits = [oifits] if isinstance(oifits, str) else oifits
    return DataDescription.from_dict({
        "oifits": [{"path": str(p), "target": target or None, "bands": list(bands) or None,
                    "instruments": list(instruments) or None, "baseline_range": baselines,
                    "bandpass": str(p) not in off} for p in oifits],
        "photometry": sources.get("photometry"), "spectrum": sources.get("spectrum"),
        "weights": dict(weights or {})})


@dataclass(frozen=True)
class DataDescription:
    """Data files and how they were selected and weighted.

    Attributes
    ----------
    oifits : tuple of dict
        One entry per OIFITS file (or directory): ``path``, ``target`` (str or None),
        ``bands`` (interferometric band names or None), ``wavelength_range`` ([lo, hi] µm
        or None), ``instruments`` (INSNAMEs or None), ``error_floor`` (keyword arguments
        of :meth:`~diskexplorer.data.ObservationSet.with_error_floor`), ``bandpass``
        (bool: the model averaged over each channel's EFF_BAND; default True).
    photometry : dict or None
        ``path``, ``a_v`` (mag or None), ``r_v``.
    spectrum : dict or None
        ``path``, ``wavelength_range`` ([lo, hi] µm or None), ``a_v``, ``r_v``.
    weights : dict
        Weight per data kind in the total χ² (see :class:`~diskexplorer.fitting.Comparison`).
    """

    oifits: tuple = ()
    photometry: dict | None = None
    spectrum: dict | None = None
    weights: dict = field(default_factory=dict)

    @classmethod
    def from_dict(cls, d, where="data"):
        """Build from the document form (unknown keys refused with a SeedError naming them)."""
        if d is None:
            return cls()
        if not isinstance(d, dict):
            raise SeedError(f"{where}: expected an object, got {type(d).__name__}")
        extra = sorted(set(d) - {"oifits", "photometry", "spectrum", "weights"})
        if extra:
            raise SeedError(f"{where}: unknown key(s) {', '.join(map(repr, extra))}; allowed: "
                            "oifits, photometry, spectrum, weights")
        oifits = d.get("oifits") or []
        if isinstance(oifits, (str, dict)):
            oifits = [oifits]
        entries = []
        for k, e in enumerate(oifits):
            e = {"path": e} if isinstance(e, str) else e
            entries.append(_oifits_entry(e, f"{where}.oifits.{k}"))
        phot = d.get("photometry")
        if isinstance(phot, str):
            phot = {"path": phot}
        if phot is not None:
            _check_keys(phot, _PHOT_KEYS, f"{where}.photometry")
            phot = {"path": phot["path"], "a_v": phot.get("a_v"), "r_v": phot.get("r_v", 3.1)}
        spec = d.get("spectrum")
        if isinstance(spec, str):
            spec = {"path": spec}
        if spec is not None:
            _check_keys(spec, _SPEC_KEYS, f"{where}.spectrum")
            spec = {"path": spec["path"], "wavelength_range": spec.get("wavelength_range"),
                    "a_v": spec.get("a_v"), "r_v": spec.get("r_v", 3.1)}
        weights = dict(d.get("weights") or {})
        from .comparison import DATA_KINDS

        unknown = sorted(set(weights) - set(DATA_KINDS))
        if unknown:
            raise SeedError(f"{where}.weights: unknown data kind(s) {', '.join(map(repr, unknown))}; "
                            f"known: {', '.join(DATA_KINDS)}")
        return cls(tuple(entries), phot, spec, {k: float(v) for k, v in weights.items()})

    def as_dict(self):
        """The document form (a deep copy)."""
        return copy.deepcopy({"oifits": list(self.oifits), "photometry": self.photometry,
                              "spectrum": self.spectrum, "weights": dict(self.weights)})

    @property
    def empty(self) -> bool:
        return not self.oifits and self.photometry is None and self.spectrum is None

    def resolve(self, path, base_dir=None):
        """``path`` made absolute against ``base_dir`` (default: the current directory)."""
        path = os.path.expanduser(path)
        if os.path.isabs(path) or base_dir is None:
            return path
        return os.path.join(os.fspath(base_dir), path)

    def load(self, base_dir=None, lenient=False):
        """Read and select the data: ``(observations, photometry, spectrum)``.

        Parameters
        ----------
        base_dir : str or os.PathLike, optional
            Directory that relative paths are relative to.
        lenient : bool
            Read what conforms in OIFITS files that do not conform to the standard, each
            defect a warning (``read_oifits(strict=False)``).

        Returns
        -------
        (ObservationSet or None, xarray.Dataset or None, xarray.Dataset or None)

        Raises
        ------
        DataError
            From the readers (missing or malformed files).
        """
        loaded, _ = self._load(base_dir, lenient)
        return loaded

    def _load(self, base_dir, lenient=False):
        """``load``'s tuple and the per-file bandpass choices ``{file: False}`` of the entries."""
        from ..data import ObservationSet, read_data_file

        sets, bandpass = [], {}
        for e in self.oifits:
            obs = read_data_file(self.resolve(e["path"], base_dir), "oifits", target=e["target"], strict=not lenient)
            if e["bands"]:
                obs = obs.select_band(*e["bands"])
            if e["wavelength_range"]:
                obs = obs.select_wavelength(*e["wavelength_range"])
            if e["instruments"]:
                obs = obs.select_instrument(*e["instruments"])
            if e["baseline_range"]:
                lo, hi = e["baseline_range"]
                obs = obs.select_baseline(lo, math.inf if hi is None else hi)
            if e["error_floor"]:
                obs = obs.with_error_floor(**e["error_floor"])
            if not e.get("bandpass", True):
                bandpass.update((f, False) for f in obs.files)
            sets.append(obs)
        observations = (sets[0] if len(sets) == 1 else ObservationSet.concat(sets)) if sets else None
        photometry = spectrum = None
        if self.photometry is not None:
            p = self.photometry
            photometry = read_data_file(self.resolve(p["path"], base_dir), "photometry", a_v=p["a_v"], r_v=p["r_v"])
        if self.spectrum is not None:
            s = self.spectrum
            spectrum = read_data_file(self.resolve(s["path"], base_dir), "spectrum", a_v=s["a_v"], r_v=s["r_v"])
            if s["wavelength_range"]:
                lo, hi = s["wavelength_range"]
                spectrum = spectrum.sel(wavelength=slice(lo, hi))
        return (observations, photometry, spectrum), bandpass

    def comparison(self, base_dir=None, accuracy=1, lenient=False):
        """A :class:`~diskexplorer.fitting.Comparison` of the loaded data with these weights
        (``lenient``: see :meth:`load`)."""
        from .comparison import Comparison

        (obs, phot, spec), bandpass = self._load(base_dir, lenient)
        # One target at a time: the entries' own target, else the science target, else the
        # largest; the other targets' points are named as not judged.
        from .not_judged import select_target

        named = {e["target"] for e in self.oifits if e["target"]}
        obs, target, why, others = select_target(obs, next(iter(named)) if len(named) == 1 else None)
        comparison = Comparison(obs, phot, spec, weights=self.weights or None, accuracy=accuracy,
                                bandpass=bandpass or True)
        comparison.left_out = tuple(others) + comparison.left_out
        comparison.target, comparison.target_reason = target, why
        return comparison


def describe_data(data):
    """A :class:`DataDescription` from a description dict, a DataDescription or a Comparison.

    A :class:`~diskexplorer.fitting.Comparison` is described by the files its data were
    read from (``ObservationSet.files``, the ``source_file`` attribute of photometry and
    spectra), its weights and its per-file bandpass choice; selections and error floors
    applied in memory are not known to it and are not recorded.
    """
    if data is None:
        return DataDescription()
    if isinstance(data, DataDescription):
        return data
    if isinstance(data, dict):
        return DataDescription.from_dict(data)
    if hasattr(data, "observations") and hasattr(data, "compare"):
        obs = data.observations
        files = [f for f in (getattr(obs, "files", ()) or ()) if f]
        phot = getattr(data, "photometry", None)
        spec = getattr(data, "spectrum", None)
        choice = getattr(data, "bandpass", True)
        d = {"oifits": [{"path": f, "bandpass": (choice.get(f, True) if isinstance(choice, dict)
                                                 else bool(choice))} for f in files],
             "photometry": phot.attrs.get("source_file") if phot is not None else None,
             "spectrum": spec.attrs.get("source_file") if spec is not None else None,
             "weights": {k: v for k, v in data.weights.items() if not (k == "t3amp" and v == 0.0)}}
        return DataDescription.from_dict(d)
    raise SeedError(f"data: expected a description dict, a DataDescription or a Comparison, got "
                    f"{type(data).__name__}")
