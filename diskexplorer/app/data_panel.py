"""Loading data (paths or uploads) and filtering it; errors go to the message area."""
from __future__ import annotations

import html
import math
import tempfile
from pathlib import Path

import ipywidgets as w
import numpy as np

from ..data.bands import INTERFEROMETRIC_BANDS
from ..errors import DiskExplorerError

__all__ = ["DataPanel", "load_into_state", "KINDS"]

#: What a path or upload can be, as shown on the kind selector.
KINDS = (("OIFITS", "oifits"), ("photometry", "photometry"), ("spectrum", "spectrum"))


def _read(kind, paths):
    if kind == "oifits":
        from ..data.oifits import read_oifits
        return read_oifits([str(p) for p in paths])
    if kind == "photometry":
        from ..data.photometry import read_photometry
        return read_photometry(str(paths[0]))
    from ..data.spectrum import read_spectrum
    return read_spectrum(str(paths[0]))


def load_into_state(state, kind, paths, add=False):
    """Read ``paths`` as ``kind`` and put the result in ``state``; on failure, only a message.

    Parameters
    ----------
    state : ExplorerState
    kind : {"oifits", "photometry", "spectrum"}
    paths : sequence of str or Path
    add : bool
        For OIFITS: add to the observations already loaded instead of replacing them.

    Returns
    -------
    bool
        Whether the data were loaded.
    """
    paths = [Path(str(p).strip()).expanduser() for p in paths if str(p).strip()]
    if not paths:
        state.say("give a path to load")
        return False
    try:
        data = _read(kind, paths)
    except DiskExplorerError as exc:
        state.say(f"not loaded: {exc}")
        return False
    except (OSError, ValueError) as exc:
        state.say(f"not loaded: {', '.join(map(str, paths))}: {exc}")
        return False
    sources = dict(state.data_sources)
    if kind == "oifits":
        if add and state.observations is not None:
            from ..data.observations import ObservationSet
            data = ObservationSet.concat([state.observations, data])
            sources["oifits"] = list(sources.get("oifits", [])) + [str(p) for p in paths]
        else:
            sources["oifits"] = [str(p) for p in paths]
        with state.hold_trait_notifications():
            state.data_sources = sources
            state.observations = data
    else:
        sources[kind] = str(paths[0])
        with state.hold_trait_notifications():
            state.data_sources = sources
            setattr(state, kind, data)
    state.say(f"loaded {kind}: {', '.join(p.name for p in paths)}")
    return True


class SpeciesForm(w.VBox):
    """Register a dust species of the user's from optical constants or a κ table.

    Parameters
    ----------
    state : ExplorerState
        Messages go to ``state.notice``.
    on_added : callable
        Called with the new species name (the explorer adds it to every mixture editor).

    Notes
    -----
    The species lives for this session's Python process (as
    :func:`diskexplorer.dust.register_species` does); sessions record mixtures by name.
    """

    def __init__(self, state, on_added):
        self.state = state
        self._on_added = on_added
        self.name = w.Text(placeholder="name, e.g. my_glass", layout={"width": "160px"})
        self.source_kind = w.ToggleButtons(options=[("n, k file", "nk"), ("κ table", "kappa")], value="nk",
                                           style={"button_width": "80px"})
        self.path = w.Text(placeholder="file path", layout={"width": "250px"})
        self.density = w.BoundedFloatText(value=3.0, min=0.1, max=25.0, step=0.1, description="ρ [g cm⁻³]",
                                          style={"description_width": "70px"}, layout={"width": "150px"})
        self.add_button = w.Button(description="add species", layout={"width": "100px"})
        self.add_button.on_click(lambda b: self.add())
        super().__init__([w.HTML("<div class='dx-section-title'>add a dust species</div>"),
                          w.HBox([self.name, self.source_kind]), w.HBox([self.path]),
                          w.HBox([self.density, self.add_button])])
        self.add_class("dx-species-form")

    def add(self):
        """Register the species described by the form; True on success."""
        from ..dust import register_species
        from ..errors import DiskExplorerError

        name = self.name.value.strip()
        path = self.path.value.strip()
        try:
            if not name or not path:
                raise DiskExplorerError("give a species name and a file")
            if self.source_kind.value == "nk":
                register_species(name, nk=path, density=float(self.density.value), source=path)
            else:
                register_species(name, kappa=path, source=path)
        except (DiskExplorerError, OSError, ValueError) as exc:
            self.state.notice = f"error: species not added: {exc}"
            return False
        self.state.notice = f"added dust species {name!r} from {path}; mixtures now offer it"
        self._on_added(name)
        return True


class DataPanel(w.VBox):
    """Path box, upload, filters (band, instrument, baseline range) and a summary."""

    def __init__(self, state, on_species_added=lambda name: None):
        self.state = state
        self.species_form = SpeciesForm(state, on_species_added)
        self.kind = w.ToggleButtons(options=KINDS, value="oifits", style={"button_width": "92px"})
        self.path = w.Text(placeholder="path(s), comma-separated", layout={"width": "250px"})
        self.path.add_class("dx-path")
        self.load_button = w.Button(description="load", button_style="primary", layout={"width": "70px"})
        self.add_box = w.Checkbox(value=False, description="add to loaded OIFITS", indent=False)
        self.upload = w.FileUpload(accept=".fits,.oifits,.csv,.txt,.dat,.tbl", multiple=True,
                                   description="upload")
        self.load_button.on_click(lambda b: self.load_paths())
        self.upload.observe(self._on_upload, "value")
        self.bands = w.SelectMultiple(description="bands", rows=4, layout={"width": "170px"},
                                      style={"description_width": "60px"})
        self.instruments = w.SelectMultiple(description="instruments", rows=4, layout={"width": "200px"},
                                            style={"description_width": "76px"})
        self.baselines = w.FloatRangeSlider(min=0.0, max=200.0, value=(0.0, 200.0), step=1.0,
                                            description="baseline [m]", continuous_update=False,
                                            style={"description_width": "86px"}, layout={"width": "340px"})
        for c in (self.bands, self.instruments, self.baselines):
            c.observe(lambda ch: self._on_filter(), "value")
        self.summary = w.HTML()
        self._quiet = False
        super().__init__([
            w.HTML("<div class='dx-section-title'>load data</div>"), self.kind,
            w.HBox([self.path, self.load_button]), w.HBox([self.upload, self.add_box]),
            w.HTML("<div class='dx-section-title'>filters</div>"), w.HBox([self.bands, self.instruments]),
            self.baselines, self.summary, self.species_form])
        self.add_class("dx-data-panel")
        state.observe(lambda ch: self.sync(), ["observations", "photometry", "spectrum"])
        self.sync()

    def load_paths(self):
        """Load the paths typed in the path box as the selected kind."""
        return load_into_state(self.state, self.kind.value, self.path.value.split(","), add=self.add_box.value)

    def load_uploaded(self, files):
        """Load uploaded files (dicts with ``name`` and ``content`` bytes) as the selected kind."""
        files = list(files)
        if not files:
            return False
        folder = Path(tempfile.mkdtemp(prefix="diskexplorer-upload-"))
        paths = []
        for f in files:
            p = folder / Path(str(f["name"])).name
            p.write_bytes(bytes(f["content"]))
            paths.append(p)
        return load_into_state(self.state, self.kind.value, paths, add=self.add_box.value)

    def _on_upload(self, change):
        if change["new"]:
            self.load_uploaded(change["new"])

    def _on_filter(self):
        if self._quiet:
            return
        lo, hi = self.baselines.value
        full = math.isclose(lo, self.baselines.min) and math.isclose(hi, self.baselines.max)
        with self.state.hold_trait_notifications():
            self.state.band_filter = tuple(self.bands.value)
            self.state.instrument_filter = tuple(self.instruments.value)
            self.state.baseline_range = (0.0, math.inf) if full else (float(lo), float(hi))

    def sync(self):
        """Offer the bands, instruments and baseline range present in the loaded data."""
        obs = self.state.observations
        self._quiet = True
        try:
            if obs is None:
                self.bands.options, self.instruments.options = (), ()
                lines = ["no interferometric data"]
            else:
                waves = np.concatenate([ds["wavelength"].values for ds in obs.datasets().values()] or [np.zeros(0)])
                present = [b for b, (lo, hi) in INTERFEROMETRIC_BANDS.items()
                           if np.any((waves >= lo) & (waves <= hi))]
                self.bands.options = present
                self.bands.value = tuple(b for b in self.state.band_filter if b in present)
                self.instruments.options = list(obs.instruments)
                self.instruments.value = tuple(i for i in self.state.instrument_filter if i in obs.instruments)
                from ..data.observations import baseline_lengths
                bmax = max((float(np.max(baseline_lengths(ds))) for k, ds in obs.datasets().items() if k != "flux"),
                           default=200.0)
                top = float(np.ceil(bmax * 1.02))
                self.baselines.max = max(top, 1.0)
                lo, hi = self.state.baseline_range
                self.baselines.value = (lo, min(hi, self.baselines.max))
                lines = [f"{k}: {n:,} points" for k, n in obs.n_points().items() if n]
            if self.state.photometry is not None:
                lines.append(f"photometry: {self.state.photometry['wavelength'].size} points")
            if self.state.spectrum is not None:
                lines.append(f"spectrum: {self.state.spectrum['wavelength'].size} samples")
            self.summary.value = "<div style='font-size:11px'>" + "<br>".join(html.escape(x) for x in lines) + "</div>"
        finally:
            self._quiet = False
