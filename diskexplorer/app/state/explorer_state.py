"""The explorer's single source of truth: the current scene, the data and the view settings.

Controls write here (through the editing methods, which build new immutable scenes);
figures read from here; the explorer's one observer turns changes into recomputations.
"""
from __future__ import annotations

import traitlets as t

from ...errors import DiskExplorerError
from ...observables.scene import Scene
from ...physics.ring import Ring
from ...physics.star import Star

__all__ = ["ExplorerState", "TIERS", "tiers_for", "MAX_PINS"]

#: At most this many pinned states (more overlays than that stop being readable).
MAX_PINS = 4

#: Which recomputation each state name asks for, cheapest first. ``style`` touches only
#: scales; ``none`` recomputes nothing (messages).
TIERS = {
    "message": "none",
    # The list of data sets and the paths are bookkeeping: the combined observations,
    # photometry and spectrum they set alongside are what asks for the data tier.
    "data_sets": "none", "data_sources": "none",
    "log_sed_x": "style", "log_sed_y": "style", "log_vis2": "style", "log_freq": "style",
    "log_profiles": "style",
    "curve_position_angle": "curve",
    "image_wavelength": "image",
    "profile_wavelength": "profiles",
    "pins": "pins",
    "scene": "model",
    "observations": "data", "photometry": "data", "spectrum": "data",
    "band_filter": "data", "instrument_filter": "data", "baseline_range": "data",
    # The starting-point set-up and the derived-quantity assumptions change no observable:
    # they refresh only their own panel.
    "fit_setup": "export",
    "t_sub": "derived", "q_r": "derived", "gap_aspect_ratio": "derived", "gap_alpha": "derived",
}


class Held(t.Any):
    """A trait holding any object, changed whenever it is set to another object.

    traitlets stays silent when ``bool(old == new)`` is true; for xarray datasets ``==``
    compares element by element and the truth of the result is that of "has variables",
    so replacing a photometry table by another one, or by None, would notify nobody.
    """

    def set(self, obj, value):
        new = self._validate(obj, value)
        old = obj._trait_values.get(self.name, self.default_value)
        obj._trait_values[self.name] = new
        if old is not new:
            obj._notify_trait(self.name, old, new)


def tiers_for(names):
    """The set of tiers that the changed ``names`` need."""
    return {TIERS.get(n, "model") for n in names} - {"none"}


class ExplorerState(t.HasTraits):
    """Everything the explorer shows, in one observable object.

    Attributes
    ----------
    scene : Scene
        The current model.
    data_sets : tuple of DataSet
        The loaded data, one entry per file (:mod:`~diskexplorer.app.state.data_sets`); change it
        with :meth:`set_data_sets`, :meth:`add_data_sets` and :meth:`remove_data_set`, which
        also set the four traits below.
    observations : ObservationSet or None
        Interferometric data as loaded (unfiltered): the OIFITS data sets concatenated.
    photometry, spectrum : xarray.Dataset or None
        Photometry (Jy) and spectrum (Jy against µm).
    data_sources : dict
        Where the data came from: ``{"oifits": [paths], "photometry": path, "spectrum": path}``.
    band_filter, instrument_filter : tuple of str
        Interferometric bands and instruments to keep; empty keeps all.
    baseline_range : tuple of float
        Projected baselines to keep, m (``(0, inf)`` keeps all).
    curve_position_angle : float
        Position angle of the baselines of the continuous model V² curve, degrees east of north.
    image_wavelength, profile_wavelength : float
        Wavelength of the model image and the brightness profile, µm.
    log_sed_x, log_sed_y, log_vis2, log_freq, log_profiles : bool
        Log axes of the SED (λ, F_ν), V² axis, spatial-frequency axes, profile radius axis.
    pins : list of dict
        Pinned states, each ``{"name": str, "scene": Scene}``.
    notice : str
        The latest message for the message area (HTML-escaped text).
    fit_setup : dict
        The starting-point set-up the export panel edits: ``free`` (list of parameter
        paths), ``bounds`` (path → [lo, hi] in the declared unit, only those the user set),
        ``priors`` (path → ``{"kind": ..., "mean": ..., "sigma": ...}``, only those set) and
        ``weights`` (data kind → weight in the total χ²; missing kinds weigh 1).
    t_sub : float
        Dust sublimation temperature assumed by the derived quantities, K.
    q_r : float
        Q_R = Q_abs(T★)/Q_abs(T_sub) of the sublimating grains (1/cooling efficiency).
    gap_aspect_ratio, gap_alpha : float
        Disk aspect ratio h/r and viscosity α assumed when gaps are read as planets.
    """

    scene = t.Instance(Scene)
    data_sets = t.Tuple()
    observations = Held(None)
    photometry = Held(None)
    spectrum = Held(None)
    data_sources = t.Dict()
    band_filter = t.Tuple()
    instrument_filter = t.Tuple()
    baseline_range = t.Tuple((0.0, float("inf")))
    curve_position_angle = t.Float(0.0)
    image_wavelength = t.Float(10.0)
    profile_wavelength = t.Float(10.0)
    log_sed_x = t.Bool(True)
    log_sed_y = t.Bool(True)
    log_vis2 = t.Bool(False)
    log_freq = t.Bool(False)
    log_profiles = t.Bool(True)
    pins = t.List()
    message = t.Unicode("")
    fit_setup = t.Dict()
    t_sub = t.Float(1500.0)
    q_r = t.Float(1.0)
    gap_aspect_ratio = t.Float(0.05)
    gap_alpha = t.Float(1e-3)

    # ------------------------------------------------------------------ editing
    def update_scene(self, **changes):
        """Replace scene fields (distance, inclination, position_angle, extended_fraction, …).

        Raises
        ------
        ParameterError
            If the new scene is invalid; the state is then unchanged.
        """
        self.scene = self.scene.replace(**changes)

    def update_star(self, *, luminosity=None, **changes):
        """Replace star fields; ``luminosity`` (L☉) sets the radius through L = 4πR²σT⁴."""
        star = self.scene.star or Star()
        kw = dict(t_eff=star.t_eff, radius=star.radius, mass=star.mass,
                  uniform_disk=star.uniform_disk, photosphere=star.photosphere)
        kw.update(changes)
        if luminosity is not None:
            kw.pop("radius")
            kw["luminosity"] = luminosity
        radius = kw.pop("radius", None)
        self.scene = self.scene.replace(star=Star(kw.pop("t_eff"), radius, **kw))

    def update_ring(self, index, **changes):
        """Replace fields of ring ``index`` (0-based)."""
        self.scene = self.scene.with_ring(index, **changes)

    def add_ring(self, ring=None):
        """Append ``ring`` (default: a cool ring just outside the outermost one)."""
        if ring is None:
            ring = default_new_ring(self.scene)
        self.scene = self.scene.replace(rings=self.scene.rings + (ring,))

    def duplicate_ring(self, index):
        """Insert a copy of ring ``index`` right after it."""
        rings = list(self.scene.rings)
        src = rings[index]
        from dataclasses import replace
        rings.insert(index + 1, replace(src, name=f"{src.name} copy"))
        self.scene = self.scene.replace(rings=tuple(rings))

    def remove_ring(self, index):
        """Remove ring ``index``."""
        rings = list(self.scene.rings)
        del rings[index]
        self.scene = self.scene.replace(rings=tuple(rings))

    def pin(self, name=None):
        """Pin the current scene under ``name``.

        Raises
        ------
        DiskExplorerError
            When :data:`MAX_PINS` states are pinned already.
        """
        if len(self.pins) >= MAX_PINS:
            raise DiskExplorerError(f"at most {MAX_PINS} pinned states; remove one first")
        taken = {p["name"] for p in self.pins}
        name = (name or "").strip() or next(f"pin {k}" for k in range(1, 100) if f"pin {k}" not in taken)
        self.pins = self.pins + [{"name": name, "scene": self.scene}]

    def unpin(self, index):
        """Remove pin ``index``."""
        self.pins = [p for k, p in enumerate(self.pins) if k != index]

    # ------------------------------------------------------------------ data
    def set_data_sets(self, data_sets):
        """Hold exactly ``data_sets`` (a sequence of :class:`~diskexplorer.app.state.data_sets.DataSet`).

        Returns
        -------
        list of str
            Warnings of combining them (e.g. two arrays of one name defined differently).
        """
        from .data_sets import combine_data_sets

        data_sets = tuple(data_sets)
        combined = combine_data_sets(data_sets)
        obs = combined["observations"]
        present_bands, present_instruments = _bands_and_instruments(obs)
        with self.hold_trait_notifications():
            self.data_sets = data_sets
            self.data_sources = combined["data_sources"]
            self.observations = obs
            self.photometry = combined["photometry"]
            self.spectrum = combined["spectrum"]
            # A filter value whose data are gone would hide everything that is left.
            self.band_filter = tuple(b for b in self.band_filter if b in present_bands)
            self.instrument_filter = tuple(i for i in self.instrument_filter if i in present_instruments)
        return combined["warnings"]

    def add_data_sets(self, data_sets):
        """Add data sets; one of a file already loaded, or a second photometry table or
        spectrum, takes the place of the one it replaces.

        Returns
        -------
        (list of DataSet, list of str)
            The data sets replaced, and the warnings of combining.
        """
        from .data_sets import SINGLE_KINDS

        held = list(self.data_sets)
        replaced = []
        for new in data_sets:
            at = next((k for k, d in enumerate(held) if (new.source and d.source == new.source)
                       or (new.kind in SINGLE_KINDS and d.kind == new.kind)), None)
            if at is None:
                held.append(new)
            else:
                replaced.append(held[at])
                held[at] = new
        return replaced, self.set_data_sets(held)

    def remove_data_set(self, index):
        """Remove data set ``index`` (0-based, in the order of :attr:`data_sets`).

        Returns
        -------
        DataSet
            The data set removed.
        """
        held = list(self.data_sets)
        gone = held.pop(index)
        self.set_data_sets(held)
        return gone

    def show_message(self, text):
        """Show ``text`` in the message area (also when it repeats the last message)."""
        if self.message == text:
            self.message = ""
        self.message = text


def _bands_and_instruments(obs):
    """Interferometric bands and instruments present in ``obs`` (empty sets for None)."""
    if obs is None:
        return set(), set()
    import numpy as np

    from ...data.bands import INTERFEROMETRIC_BANDS

    waves = np.concatenate([ds["wavelength"].values for ds in obs.datasets().values()] or [np.zeros(0)])
    bands = {b for b, (lo, hi) in INTERFEROMETRIC_BANDS.items() if np.any((waves >= lo) & (waves <= hi))}
    return bands, set(obs.instruments)


def default_new_ring(scene):
    """A new ring: twice as far out as the outermost ring, cooler, same dust."""
    from dataclasses import replace
    rings = scene.rings
    if not rings:
        return Ring(name="ring 1", dust=_default_dust())
    last = max(rings, key=lambda r: r.r_out)
    spec_hi = 200.0
    r_in = min(last.r_out * 1.5, spec_hi / 3)
    names = {r.name for r in rings}
    name = next(f"ring {k}" for k in range(len(rings) + 1, 200) if f"ring {k}" not in names)
    return replace(last, r_in=r_in, r_out=r_in * 2.0, t_in=max(60.0, last.t_in * 0.6),
                   c1=0.0, s1=0.0, name=name, enabled=True)


def _default_dust():
    from ...dust import DustMix

    return DustMix({"olivine_glass": 1.0})
