"""The explorer's single source of truth: the current scene, the data and the view settings.

Controls write here (through the editing methods, which build new immutable scenes);
figures read from here; the explorer's one observer turns changes into recomputations.
"""
from __future__ import annotations

import dataclasses
import math

import traitlets as t

from ...errors import DataError, DiskExplorerError
from ...observables.scene import Scene
from ...physics.ring import Ring
from ...physics.star import Star
from .data_sets import SINGLE_KINDS, bandpass_choice, combine_data_sets, describe_loaded, read_data_sets
from .fit_setup import clean_fit_setup
from .sessions import VIEW_SETTINGS
from .workdir import readable_path

__all__ = ["ExplorerState", "TIERS", "tiers_for", "MAX_PINS"]

#: At most this many pinned states (more overlays than that stop being readable).
MAX_PINS = 4

#: Which recomputation each state name asks for, cheapest first. ``style`` touches only
#: scales; ``none`` recomputes nothing (messages).
TIERS = {
    "message": "none", "workdir": "none", "confined": "none", "read_folders": "none",
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
    "band_filter": "data", "instrument_filter": "data", "baseline_range": "data", "target": "data",
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
    workdir : str
        The folder relative paths typed into the explorer refer to
        (:mod:`~diskexplorer.app.state.workdir`); set once, when the explorer is made.
    confined : bool
        Whether typed paths may only lead into ``workdir`` and ``read_folders``, and saves
        only into ``workdir`` (a served page; set once by :meth:`confine`).
    read_folders : tuple of str
        Files and folders a confined explorer may read besides ``workdir`` (the demo's ``--data``).
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
    target : str
        The target judged ("": the science target if OI_TARGET says which, else the one
        with most points; see :func:`~diskexplorer.data.targets.choose_target`).
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
    workdir = t.Unicode("")
    confined = t.Bool(False)
    read_folders = t.Tuple()
    data_sets = t.Tuple()
    observations = Held(None)
    photometry = Held(None)
    spectrum = Held(None)
    data_sources = t.Dict()
    band_filter = t.Tuple()
    target = t.Unicode("")
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

    # ------------------------------------------------------------------ the scene
    # Every change of the scene goes through one of these methods: each builds a new
    # frozen scene, so an invalid value raises before anything is assigned.
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
        rings.insert(index + 1, dataclasses.replace(src, name=f"{src.name} copy"))
        self.scene = self.scene.replace(rings=tuple(rings))

    def remove_ring(self, index):
        """Remove ring ``index``."""
        rings = list(self.scene.rings)
        del rings[index]
        self.scene = self.scene.replace(rings=tuple(rings))

    def set_parameters(self, values):
        """Set parameters by path (a grid point, refined values).

        Parameters
        ----------
        values : mapping of str to float
            Parameter path (:mod:`~diskexplorer.fitting.paths`, e.g. ``rings.0.t_in``) →
            value in the parameter's declared unit.

        Raises
        ------
        DiskExplorerError
            An unknown path or an invalid value; the state is then unchanged.
        """
        from ...fitting.paths import set_values

        try:
            scene = set_values(self.scene, dict(values))
        except (IndexError, KeyError) as exc:
            raise DiskExplorerError(f"cannot set {', '.join(values)}: {exc}") from None
        self.scene = scene

    def apply_start(self, start):
        """Take a starting point's scene and its free parameters, bounds, priors and weights.

        Parameters
        ----------
        start : StartingPoint
            As :func:`~diskexplorer.fitting.read_start` returns it.

        Raises
        ------
        DiskExplorerError
            The scene cannot be computed against the loaded data; the state is then
            unchanged and the message says why.
        """
        setup = clean_fit_setup(self.fit_setup)
        setup.update(free=list(start.paths),
                     bounds={p: [f.lo, f.hi] for p, f in start.parameters.items()},
                     priors={p: f.prior.as_dict() for p, f in start.parameters.items()})
        if start.data.weights:
            setup["weights"] = {k: v for k, v in start.data.weights.items() if v != 1.0}
        values = {"scene": start.scene, "fit_setup": clean_fit_setup(setup)}
        try:
            self._check_computable(values)
        except DiskExplorerError as exc:
            self.show_message(f"starting point not imported: {exc}")
            raise
        self._commit(values)

    # ------------------------------------------------------------------ settings
    def set_view(self, **settings):
        """Change view settings and the derived quantities' assumptions (:data:`VIEW_SETTINGS`).

        Raises
        ------
        DiskExplorerError
            For a name that is not a view setting.
        """
        unknown = set(settings) - set(VIEW_SETTINGS)
        if unknown:
            raise DiskExplorerError(f"not a view setting: {', '.join(sorted(unknown))}")
        with self.hold_trait_notifications():
            for name, value in settings.items():
                setattr(self, name, value)

    def set_filters(self, bands=None, instruments=None, baseline_range=None, target=None):
        """Keep only some interferometric bands, instruments, projected baselines (m) and one target.

        ``None`` leaves a filter as it is; empty bands or instruments keep all,
        ``(0, inf)`` keeps every baseline and ``target=""`` chooses the target
        automatically.
        """
        with self.hold_trait_notifications():
            if target is not None:
                self.target = str(target)
            if bands is not None:
                self.band_filter = tuple(bands)
            if instruments is not None:
                self.instrument_filter = tuple(instruments)
            if baseline_range is not None:
                lo, hi = baseline_range
                self.baseline_range = (float(lo), float(hi))

    def set_fit_setup(self, setup):
        """Replace the starting-point set-up (cleaned: :func:`clean_fit_setup`), if it changed."""
        setup = clean_fit_setup(setup)
        if setup != clean_fit_setup(self.fit_setup):
            self.fit_setup = setup

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

    # ------------------------------------------------------------------ transactions
    # A change that touches several traits builds every new value first, checks that the
    # result can be computed, and only then assigns them all at once (_commit): a refusal
    # leaves the state exactly as it was.
    def _may_read(self):
        """For the files of a typed folder: None (a notebook reads anything), or a test that a
        confined explorer may read a file (its real path inside the allowed folders)."""
        if not self.confined:
            return None

        def may_read(path):
            try:
                readable_path(self, path)
                return True
            except DiskExplorerError:
                return False
        return may_read

    def _commit(self, values):
        """Assign trait values at once, each validated first (a refused value assigns nothing)."""
        traits = self.traits()
        checked = {name: traits[name]._validate(self, value) for name, value in values.items()}
        with self.hold_trait_notifications():
            for name, value in checked.items():
                setattr(self, name, value)

    def _data_values(self, data_sets):
        """The trait values that holding ``data_sets`` sets (nothing assigned), and combining's warnings."""
        data_sets = tuple(data_sets)
        combined = combine_data_sets(data_sets)
        obs = combined["observations"]
        present_bands, present_instruments = _bands_and_instruments(obs)
        return {"data_sets": data_sets, "data_sources": combined["data_sources"], "observations": obs,
                "photometry": combined["photometry"], "spectrum": combined["spectrum"],
                # A filter value whose data are gone would hide everything that is left.
                "band_filter": tuple(b for b in self.band_filter if b in present_bands),
                "instrument_filter": tuple(i for i in self.instrument_filter if i in present_instruments)
                }, combined["warnings"]

    def _check_computable(self, values):
        """Raise DiskExplorerError unless the state with ``values`` can be computed.

        Builds what the explorer's recompute builds for it (the filtered data and their
        comparison, and one frame of the scene: χ², SED, spectrum, V² curve) and refuses a
        χ² that is not finite.
        """
        from .data_view import data_view
        from .frames import make_frame

        def get(name):
            return values[name] if name in values else getattr(self, name)

        try:
            view = data_view(get("observations"), get("photometry"), get("spectrum"), bands=get("band_filter"),
                           instruments=get("instrument_filter"), baseline_range=get("baseline_range"),
                           bandpass=bandpass_choice(get("data_sets")), target=get("target"))
            frame = make_frame(get("scene"), view, get("curve_position_angle"))
        except DiskExplorerError as exc:
            raise DiskExplorerError(f"cannot be computed: {exc}") from None
        except Exception as exc:  # noqa: BLE001 - whatever the data break, the state must not take them
            raise DiskExplorerError(f"cannot be computed: {type(exc).__name__}: {exc}") from None
        result = frame.result
        if result is not None and not math.isfinite(result.total):
            bad = [k for k, v in result.chi2.items() if not math.isfinite(v)]
            raise DataError(f"cannot be computed: the χ² of {', '.join(bad) or 'the data'} is not finite "
                            "(values or errors out of range)")

    def _check_new_data(self, held, new):
        """Check that ``held`` (the data sets after a change) can be computed; name the culprits of ``new``.

        Returns
        -------
        (dict, list of str)
            The trait values of holding ``held`` and the warnings of combining
            (:meth:`_data_values`), to be committed.

        Raises
        ------
        DiskExplorerError
            ``"<file>: cannot be computed: ..."``, naming the new data set that fails with
            the data kept, or all new ones if none fails alone.
        """
        names = ", ".join(d.source or d.label for d in new) or "the data"
        try:
            values, warnings = self._data_values(held)
        except DiskExplorerError as exc:
            raise DataError(f"{names}: cannot be combined with the data held: {exc}") from None
        except Exception as exc:  # noqa: BLE001 - e.g. numpy on tables that do not fit together
            raise DataError(f"{names}: cannot be combined with the data held: {type(exc).__name__}: {exc}") from None
        try:
            self._check_computable(values)
            return values, warnings
        except DiskExplorerError as exc:
            failure = str(exc)
        new_ids = {id(d) for d in new}
        kept = [d for d in held if id(d) not in new_ids]
        for d in new:
            try:
                self._check_computable(self._data_values(kept + [d])[0])
            except DiskExplorerError as exc:
                raise DataError(f"{d.source or d.label}: {exc}") from None
            except Exception as exc:  # noqa: BLE001 - as above
                raise DataError(f"{d.source or d.label}: cannot be combined with the data held: "
                                f"{type(exc).__name__}: {exc}") from None
        raise DataError(f"{names}: {failure}")

    # ------------------------------------------------------------------ data
    def set_data_sets(self, data_sets, check=False):
        """Hold exactly ``data_sets`` (a sequence of :class:`~diskexplorer.app.state.data_sets.DataSet`).

        Parameters
        ----------
        data_sets : sequence of DataSet
        check : bool
            First check that the explorer can compute with them (as :meth:`load_files`
            does); the explorer checks the data it opens with.

        Returns
        -------
        list of str
            Warnings of combining them (e.g. an array of one name with other stations, kept apart).

        Raises
        ------
        DataError
            With ``check``: a data set the explorer cannot compute with, by name; the state
            is then unchanged.
        """
        if check:
            values, warnings = self._check_new_data(list(data_sets), list(data_sets))
        else:
            values, warnings = self._data_values(data_sets)
        self._commit(values)
        return warnings

    def _after_adding(self, data_sets):
        """``(held, replaced)``: the data sets after adding ``data_sets`` (see :meth:`add_data_sets`)."""
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
        return held, replaced

    def add_data_sets(self, data_sets):
        """Add data sets; one of a file already loaded, or a second photometry table or
        spectrum, takes the place of the one it replaces.

        Returns
        -------
        (list of DataSet, list of str)
            The data sets replaced, and the warnings of combining.
        """
        held, replaced = self._after_adding(data_sets)
        return replaced, self.set_data_sets(held)

    def remove_data_set(self, index):
        """Remove data set ``index`` (0-based, in the order of :attr:`data_sets`).

        Returns
        -------
        DataSet
            The data set removed.

        Raises
        ------
        DiskExplorerError
            If the data left cannot be computed (the state is then unchanged).
        """
        held = list(self.data_sets)
        gone = held.pop(index)
        values, _ = self._data_values(held)
        self._check_computable(values)
        self._commit(values)
        return gone

    def load_files(self, paths, kind="auto", add=False, lenient=False, uploaded=False):
        """Read files and folders into the data; on failure only a message, nothing changes.

        Parameters
        ----------
        paths : sequence of str or Path
            Relative paths refer to the explorer's working folder (``workdir``); a
            confined explorer refuses paths outside its folders
            (:mod:`~diskexplorer.app.state.workdir`).
        kind : {"auto", "oifits", "photometry", "spectrum"} or None
            Which reader to use; "auto" or None: each file's kind from its content.
        add : bool
            Add to the data already loaded (a file loaded again, or a second photometry
            table or spectrum, replaces its earlier version). If False, the new data
            replace every loaded data set of their kinds.
        lenient : bool
            Read what conforms in OIFITS files that do not conform to the standard; each
            defect is listed as a warning of the file's data set.
        uploaded : bool
            The paths are files the explorer wrote itself (uploads): absolute, read as
            given, also by a confined explorer.

        Returns
        -------
        bool
            Whether the data were loaded. The message says what was loaded, replaced and
            warned about, or why nothing was.

        Notes
        -----
        Data are taken only if the explorer can compute with them: the filtered data, the
        χ² of the current scene and its model views are computed once before anything is
        assigned, and a data set that breaks them is refused by name.
        """
        texts = [str(p).strip() for p in paths if str(p).strip()]
        if not texts:
            self.show_message("give a path to load (a file or a folder)")
            return False
        try:
            resolved = texts if uploaded else [readable_path(self, t) for t in texts]
            sets, notes = read_data_sets(resolved, kind=None if kind in (None, "auto") else kind, lenient=lenient,
                                         may_read=None if uploaded else self._may_read())
        except DiskExplorerError as exc:
            self.show_message(f"not loaded: {exc}")
            return False
        except (OSError, ValueError) as exc:
            self.show_message(f"not loaded: {', '.join(map(str, resolved))}: {exc}")
            return False
        if add:
            held, replaced = self._after_adding(sets)
        else:
            kinds = {d.kind for d in sets}
            replaced = [d for d in self.data_sets if d.kind in kinds]
            held = [d for d in self.data_sets if d.kind not in kinds] + sets
        try:
            values, combine_warnings = self._check_new_data(held, sets)
        except DiskExplorerError as exc:
            self.show_message(f"not loaded: {exc}")
            return False
        self._commit(values)
        parts = [f"loaded {describe_loaded(sets)}"]
        if replaced:
            parts.append(f"replaced {', '.join(d.label for d in replaced)}")
        warned = [f"{d.label}: {w}" for d in sets for w in d.warnings] + list(combine_warnings)
        if warned:
            parts.append(f"{len(warned)} warning(s): " + " | ".join(warned))
        left_out = [str(x) for d in sets for x in d.not_judged]
        if left_out:
            parts.append("not judged: " + " | ".join(left_out))
        if notes:
            parts.append(" | ".join(notes))
        self.show_message("; ".join(parts))
        return True

    def drop_data(self, data_set=None):
        """Remove one data set (held, or its index) or, with None, every one; says what went.

        Returns
        -------
        bool
            Whether anything was removed. When what is left cannot be computed, nothing
            is removed and the message says why.
        """
        if data_set is None:
            if not self.data_sets:
                return False
            n = len(self.data_sets)
            values, _ = self._data_values(())
            try:
                self._check_computable(values)
            except DiskExplorerError as exc:
                self.show_message(f"not removed: {exc}")
                return False
            self._commit(values)
            self.show_message(f"removed all {n} data set(s); no data loaded: no χ²")
            return True
        index = self._index_of(data_set)
        if index is None:
            return False
        try:
            gone = self.remove_data_set(index)
        except DiskExplorerError as exc:
            self.show_message(f"{self.data_sets[index].label} not removed: {exc}")
            return False
        left = len(self.data_sets)
        self.show_message(f"removed {gone.kind_label}: {gone.label}" + ("" if left else "; no data loaded: no χ²"))
        return True

    def set_bandpass(self, data_set, on):
        """Average the model of an OIFITS data set (held, or its index) over its channels, or not.

        Returns
        -------
        bool
            Whether the switch changed (not when the data cannot be computed so; the
            message then says why).
        """
        index = self._index_of(data_set)
        held = list(self.data_sets)
        if index is None or held[index].kind != "oifits" or held[index].bandpass == bool(on):
            return False
        old = held[index]
        held[index] = dataclasses.replace(old, bandpass=bool(on))
        values, _ = self._data_values(held)
        try:
            self._check_computable(values)
        except DiskExplorerError as exc:
            self.show_message(f"{old.label}: bandpass not switched: {exc}")
            return False
        self._commit(values)
        self.show_message(f"{old.label}: model " + ("averaged over each channel's EFF_BAND" if on
                                                    else "at the channel centres (bandpass off)"))
        return True

    def _index_of(self, data_set):
        held = self.data_sets
        index = data_set if isinstance(data_set, int) else next(
            (k for k, d in enumerate(held) if d is data_set), None)
        return index if index is not None and 0 <= index < len(held) else None

    # ------------------------------------------------------------------ serving
    def confine(self, readable=()):
        """Confine typed paths to the working folder and ``readable`` (a served page); for good.

        Parameters
        ----------
        readable : sequence of str or os.PathLike
            Files and folders that may be read besides the working folder (``--data``).
        """
        import os

        self._commit({"confined": True, "read_folders": tuple(os.path.abspath(os.fspath(p)) for p in readable)})

    # ------------------------------------------------------------------ sessions
    def restore_session(self, contents, source=None):
        """Take everything a session holds: scene, data (re-read from paths), filters, view,
        pins and starting-point set-up.

        Parameters
        ----------
        contents : SessionContents
            As :func:`~diskexplorer.app.state.sessions.decode_session` returns it.
        source : str, optional
            The session file, for messages.

        Returns
        -------
        list of str
            Why data files of the session were not loaded (empty when all were).

        Raises
        ------
        DiskExplorerError
            When the session cannot be taken (its data cannot be computed with its scene,
            or a value the state refuses): nothing changes, and the message says why.

        Notes
        -----
        The data become exactly the session's: whatever was loaded before is dropped, so a
        kind the session lacks cannot go on counting in χ². Data files that cannot be
        read are listed in the result; everything else is still restored. Every new value
        is built and checked first, then all are assigned at once.
        """
        try:
            problems, values = self._session_values(contents)
            self._check_computable(values)
            self._commit(values)
        except DiskExplorerError as exc:
            self.show_message(f"session not restored{f' from {source}' if source else ''}: {exc}")
            raise
        except (t.TraitError, ValueError, TypeError) as exc:
            self.show_message(f"session not restored{f' from {source}' if source else ''}: {exc}")
            raise DiskExplorerError(str(exc)) from None
        return problems

    def _session_values(self, contents):
        """``(problems, values)``: the trait values of a session (nothing assigned)."""
        data = contents.data
        problems, sets = [], []
        loads = [(data["oifits"], "oifits")] if data.get("oifits") else []
        loads += [([data[kind]], kind) for kind in ("photometry", "spectrum") if data.get(kind)]
        for paths, kind in loads:
            try:
                got, _ = read_data_sets([readable_path(self, p) for p in paths], kind=kind)
            except DiskExplorerError as exc:
                problems.append(f"not loaded: {exc}")
                continue
            except (OSError, ValueError) as exc:
                problems.append(f"not loaded: {', '.join(map(str, paths))}: {exc}")
                continue
            sets += got
        off = set(contents.bandpass_off)
        sets = [dataclasses.replace(d, bandpass=False) if d.source in off else d for d in sets]
        values, _ = self._data_values(sets)
        lo, hi = contents.baseline_range
        values.update(band_filter=tuple(contents.bands), instrument_filter=tuple(contents.instruments),
                      baseline_range=(float(lo), float(hi)), target=str(contents.target or ""))
        values.update({k: v for k, v in contents.view.items() if k in VIEW_SETTINGS})
        values.update(pins=[{"name": name, "scene": scene} for name, scene in contents.pins],
                      scene=contents.scene, fit_setup=clean_fit_setup(contents.fit_setup or {}))
        return problems, values

    # ------------------------------------------------------------------ messages
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
    rings = scene.rings
    if not rings:
        return Ring(name="ring 1", dust=_default_dust())
    last = max(rings, key=lambda r: r.r_out)
    spec_hi = 200.0
    r_in = min(last.r_out * 1.5, spec_hi / 3)
    names = {r.name for r in rings}
    name = next(f"ring {k}" for k in range(len(rings) + 1, 200) if f"ring {k}" not in names)
    return dataclasses.replace(last, r_in=r_in, r_out=r_in * 2.0, t_in=max(60.0, last.t_in * 0.6),
                   c1=0.0, s1=0.0, name=name, enabled=True)


def _default_dust():
    from ...dust import DustMix

    return DustMix({"olivine_glass": 1.0})
