"""The data tab: load files and folders, list what is loaded (remove any), filter, add dust species.

Loaded data live in the state as a list of data sets (:mod:`~diskexplorer.app.state.data_sets`),
one per file with its reader's warnings; errors and warnings go to the message area, and
a failed load changes nothing.
"""
from __future__ import annotations

import html
import math
import tempfile
from pathlib import Path

import ipywidgets as w
import numpy as np

from ...data.bands import INTERFEROMETRIC_BANDS
from ...data.targets import choose_target, target_points
from ...errors import DiskExplorerError
from ..state.echo_guard import EchoGuard
from ..palette import MUTED, WARNING
from ..state.workdir import readable_path

__all__ = ["DataPage", "DataSetRow", "KINDS"]

#: What a path or upload is read as, as shown on the kind selector ("auto": by its content).
KINDS = (("by content", "auto"), ("OIFITS", "oifits"), ("photometry", "photometry"), ("spectrum", "spectrum"))



class DataSetRow(w.VBox):
    """One loaded data set in the data tab: file, kind, points, warnings and a remove button."""

    def __init__(self, data_set, on_remove, on_bandpass=None):
        self.data_set = data_set
        d = data_set
        title = html.escape(d.source or "given in memory", quote=True)
        self.text = w.HTML(f"<div title='{title}' style='font-size:12px;line-height:1.3'>"
                           f"<b>{html.escape(d.label)}</b> <span style='color:{MUTED}'>"
                           f"{html.escape(d.kind_label)} · {html.escape(d.describe_points())}</span></div>",
                           layout={"width": "300px"})
        self.remove_button = w.Button(description="remove", tooltip=f"remove {d.label}", layout={"width": "70px"})
        self.remove_button.add_class("dx-remove-data")
        self.remove_button.on_click(lambda b: on_remove(self.data_set))
        # Reader warnings, then the points χ² leaves out and why (never silently).
        self.warnings = w.HTML("".join(f"<div style='font-size:11px;color:{WARNING}'>⚠ {html.escape(x)}</div>"
                                       for x in d.warnings)
                               + "".join(f"<div class='dx-not-judged' style='font-size:11px;color:{WARNING}'>"
                                         f"not judged: {html.escape(str(x))}</div>" for x in d.not_judged))
        line = [self.text, self.remove_button]
        self.bandpass = None
        if d.kind == "oifits":
            # Channels of low spectral resolution smear V², closure and differential phases;
            # switching it off compares the model at the channel centres (faster, and what
            # a file without meaningful EFF_BAND needs).
            self.bandpass = w.Checkbox(value=bool(d.bandpass), description="bandpass", indent=False,
                                       tooltip="channel bandpass: average the model over each channel's EFF_BAND",
                                       layout={"width": "86px"})
            self.text.layout.width = "214px"
            self.bandpass.add_class("dx-bandpass")
            if on_bandpass is not None:
                self.bandpass.observe(lambda ch: on_bandpass(self.data_set, bool(ch["new"])), "value")
            line.insert(1, self.bandpass)
        super().__init__([w.HBox(line), self.warnings])
        self.add_class("dx-data-set")


class SpeciesForm(w.VBox):
    """Register a dust species of the user's from optical constants or a κ table.

    Parameters
    ----------
    state : ExplorerState
        Messages go to ``state.message``.
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
        from ...dust import register_species

        name = self.name.value.strip()
        typed = self.path.value.strip()
        try:
            path = str(readable_path(self.state, typed)) if typed else ""
            if not name or not path:
                raise DiskExplorerError("give a species name and a file")
            if self.source_kind.value == "nk":
                register_species(name, nk=path, density=float(self.density.value), source=path)
            else:
                register_species(name, kappa=path, source=path)
        except (DiskExplorerError, OSError, ValueError) as exc:
            self.state.show_message(f"error: species not added: {exc}")
            return False
        self.state.show_message(f"added dust species {name!r} from {path}; mixtures now offer it")
        self._on_added(name)
        return True


class DataPage(w.VBox):
    """Path box, upload, the list of loaded data sets, filters (band, instrument, baseline range)."""

    def __init__(self, state, on_species_added=lambda name: None):
        self.state = state
        self.species_form = SpeciesForm(state, on_species_added)
        self.kind = w.ToggleButtons(options=KINDS, value="auto", style={"button_width": "86px"},
                                    tooltips=["recognise each file by its content", "read as OIFITS",
                                              "read as a photometry table", "read as a spectrum"])
        self.path = w.Text(placeholder="file(s) or folder(s), comma-separated", layout={"width": "250px"})
        self.path.add_class("dx-path")
        self.load_button = w.Button(description="load", button_style="primary", layout={"width": "70px"})
        # Off: a file that does not conform to OIFITS is refused with its defects. On: what
        # conforms is read and each defect is listed beside the file.
        self.lenient = w.Checkbox(value=False, description="lenient", indent=False, layout={"width": "80px"},
                                  tooltip="read what conforms in OIFITS files that do not conform to the "
                                          "standard; each defect is listed beside the file")
        self.lenient.add_class("dx-lenient")
        self.load_button.add_class("dx-load-data")
        self.upload = w.FileUpload(accept=".fits,.oifits,.fit,.gz,.csv,.txt,.dat,.tbl", multiple=True,
                                   description="upload")
        self.load_button.on_click(lambda b: self.load_paths())
        self.upload.observe(self._on_upload, "value")
        self.rows = w.VBox()
        self.rows.add_class("dx-data-sets")
        self.clear_button = w.Button(description="remove all", layout={"width": "90px"})
        self.clear_button.on_click(lambda b: self.remove_all())
        self.bands = w.SelectMultiple(description="bands", rows=4, layout={"width": "170px"},
                                      style={"description_width": "60px"})
        self.instruments = w.SelectMultiple(description="instruments", rows=4, layout={"width": "200px"},
                                            style={"description_width": "76px"})
        # Shown when the data hold several targets: the one the model is judged against.
        self.target = w.Dropdown(options=[("automatic", "")], value="", description="target",
                                 style={"description_width": "60px"}, layout={"width": "340px", "display": "none"})
        self.target.add_class("dx-target")
        self.target.observe(lambda ch: self._on_target(), "value")
        self.baselines = w.FloatRangeSlider(min=0.0, max=200.0, value=(0.0, 200.0), step=1.0,
                                            description="baseline [m]", continuous_update=False,
                                            style={"description_width": "86px"}, layout={"width": "340px"})
        for c in (self.bands, self.instruments, self.baselines):
            c.observe(lambda ch: self._on_filter(), "value")
        self.summary = w.HTML()
        self._quiet = EchoGuard()
        super().__init__([
            w.HTML("<div class='dx-section-title'>load data</div>"), self.kind,
            w.HBox([self.path, self.load_button]), w.HBox([self.upload, self.lenient]),
            w.HTML("<div class='dx-section-title'>loaded data</div>"), self.rows, self.clear_button,
            w.HTML("<div class='dx-section-title'>filters</div>"), self.target, w.HBox([self.bands, self.instruments]),
            self.baselines, self.summary, self.species_form])
        self.add_class("dx-data-panel")
        state.observe(lambda ch: self.sync(), ["observations", "photometry", "spectrum", "data_sets"])
        self.sync()

    def load_paths(self):
        """Add the files and folders typed in the path box, read as the selected kind."""
        return self.state.load_files(self.path.value.split(","), self.kind.value, add=True, lenient=self.lenient.value)

    def load_uploaded(self, files):
        """Add uploaded files (dicts with ``name`` and ``content`` bytes), read as the selected kind."""
        files = list(files)
        if not files:
            return False
        folder = Path(tempfile.mkdtemp(prefix="diskexplorer-upload-"))
        paths = []
        for f in files:
            p = folder / Path(str(f["name"])).name
            p.write_bytes(bytes(f["content"]))
            paths.append(p)
        # Files this page wrote itself: read as given, also by a served (confined) page.
        return self.state.load_files(paths, self.kind.value, add=True, lenient=self.lenient.value, uploaded=True)

    def remove(self, data_set):
        """Remove ``data_set`` (a DataSet held by the state, or its index)."""
        return self.state.drop_data(data_set)

    def set_bandpass(self, data_set, on):
        """Average the model of ``data_set`` (held, or its index) over its channels, or not."""
        return self.state.set_bandpass(data_set, on)

    def remove_all(self):
        """Remove every data set."""
        return self.state.drop_data(None)

    def _on_upload(self, change):
        if change["new"]:
            self.load_uploaded(change["new"])

    def _on_target(self):
        if self._quiet:
            return
        self.state.set_filters(target=self.target.value)

    def _on_filter(self):
        if self._quiet:
            return
        lo, hi = self.baselines.value
        full = math.isclose(lo, self.baselines.min) and math.isclose(hi, self.baselines.max)
        self.state.set_filters(self.bands.value, self.instruments.value,
                               (0.0, math.inf) if full else (lo, hi))

    def _show_targets(self, obs):
        targets = target_points(obs)
        if len(targets) < 2:
            self.target.layout.display = "none"
            return
        chosen, why = choose_target(obs)
        options = [(f"automatic: {chosen} ({why})", "")] + [
            (f"{t['name']}" + (f" [{t['category']}]" if t["category"] else "") + f" · {t['points']:,} points", t["name"])
            for t in targets]
        if self.target.options != tuple(options):
            self.target.options = options
        self.target.value = self.state.target if self.state.target in [v for _, v in options] else ""
        self.target.layout.display = None

    def sync(self):
        """List the data sets; offer the bands, instruments and baseline range present in the data."""
        st = self.state
        if tuple(getattr(r, "data_set", None) for r in self.rows.children) != tuple(st.data_sets):
            self.rows.children = [DataSetRow(d, self.remove, self.set_bandpass) for d in st.data_sets] or [
                w.HTML(f"<div style='font-size:12px;color:{MUTED}'>none: load files or a folder above</div>")]
        self.clear_button.disabled = not st.data_sets
        obs = st.observations
        with self._quiet:
            if obs is None:
                self.bands.options, self.instruments.options = (), ()
                self.target.layout.display = "none"
                lines = ["no interferometric data"]
            else:
                waves = np.concatenate([ds["wavelength"].values for ds in obs.datasets().values()] or [np.zeros(0)])
                present = [b for b, (lo, hi) in INTERFEROMETRIC_BANDS.items()
                           if np.any((waves >= lo) & (waves <= hi))]
                self.bands.options = present
                self.bands.value = tuple(b for b in st.band_filter if b in present)
                self.instruments.options = list(obs.instruments)
                self.instruments.value = tuple(i for i in st.instrument_filter if i in obs.instruments)
                from ...data.observations import baseline_lengths
                bmax = max((float(np.max(baseline_lengths(ds))) for k, ds in obs.datasets().items() if k != "flux"),
                           default=200.0)
                top = max(float(np.ceil(bmax * 1.02)), 1.0)
                self.baselines.max = top  # the slider clamps its value into the new range
                lo, hi = st.baseline_range
                self.baselines.value = (min(lo, top), min(hi, top))
                lines = [f"{k}: {n:,} points in total" for k, n in obs.n_points().items() if n]
                self._show_targets(obs)
            self.summary.value = "<div style='font-size:11px'>" + "<br>".join(html.escape(x) for x in lines) + "</div>"
