"""The explorer: state, controls and figures wired through one observer and one recompute."""
from __future__ import annotations

import math
import time

import ipywidgets as w

from ..physics.parameters import ParameterSpec
from .controls.model_panels import ExtendedPanel, GeometryPanel, StarPanel
from .controls.param_control import ParamControl
from .pages.data_page import DataPage
from .pages.lazy_page import LazyPage
from .state.data_sets import bandpass_choice, data_sets_from
from .state.data_view import data_view
from .state.debounce import Debouncer
from .pages.derived_page import DerivedPage
from .pages.start_page import StartPage
from .figures import (Chi2Table, ClosureFigure, CorrelatedFluxFigure, CorrFluxPointsFigure, DiffPhaseFigure,
                      ImageFigure, ProfilesFigure, SedFigure, SpectrumFigure, VisAmpFigure, Vis2Figure)
from .figures.figure_set import FigureSet
from .figures.base import DOTS_CSS
from .snapshot import SNAPSHOT_CSS, Snapshot
from .state.frames import Frame, make_frame, model_curve
from .state.model_views import image, profiles
from .palette import ACCENT, INK, MUTED, PAPER
from .pages.pins_page import PinBoard, pin_colour
from .controls.ring_cards import RingDeck
from .pages.scan_page import ScanPage
from .pages.session_box import SessionBox
from .state.explorer_state import ExplorerState, tiers_for
from .state.workdir import working_folder

__all__ = ["Explorer", "explore", "Frame"]

#: Figures drawn only while their page shows (see Explorer._update_structure).
_STRUCTURE = ("image", "profiles")

_WAVELENGTH_SPEC = ParameterSpec(name="wavelength", unit="um", label="λ", description="wavelength of the view",
                                 valid=(0.0, math.inf), closed=(False, False), bounds=(1.0, 30.0), scale="log")
_CURVE_PA_SPEC = ParameterSpec(name="curve_position_angle", unit="deg", label="PA_curve",
                               description="position angle of the baselines of the model curve, east of north",
                               valid=(0.0, 360.0), closed=(True, True), bounds=(0.0, 180.0))

_CSS = f"""
<style>
.dx-root {{ background: {PAPER}; color: {INK}; font-family: system-ui, -apple-system, "Segoe UI", sans-serif; }}
.dx-header {{ border-bottom: 2px solid {ACCENT}; padding: 4px 8px; }}
.dx-section-title {{ font-weight: 600; font-size: 12px; letter-spacing: .06em; text-transform: uppercase;
  color: {ACCENT}; margin: 10px 0 2px 0; }}
.dx-ring-card {{ border-left: 3px solid #d8d4ca; padding-left: 6px; margin: 6px 0; }}
.dx-controls {{ border-right: 1px solid #e6e4de; padding-right: 6px; }}
.dx-message {{ font-size: 12px; color: {INK}; }}
.dx-caption {{ font-size: 11px; color: {MUTED}; margin-left: 62px; }}
/* A narrow output (a notebook beside its file browser) wraps tab bars and buttons grow to
   their label, instead of cutting labels with an ellipsis. */
.dx-root .widget-tab > .lm-TabBar, .dx-root .jupyter-widget-tab > .lm-TabBar {{ height: auto; min-height: 25px; }}
.dx-root .lm-TabBar-content {{ flex-wrap: wrap; }}
.dx-root .lm-TabBar-tab {{ flex: 0 0 auto !important; min-width: max-content !important; }}
.dx-root .lm-TabBar-tabLabel {{ overflow: visible; }}
.dx-root .jupyter-button {{ min-width: max-content; }}
/* What is wider than its page (a long snippet, a wide table) scrolls inside it. */
.dx-root pre {{ max-width: 100%; overflow-x: auto; }}
.dx-pages .widget-tab-contents, .dx-pages > .lm-TabPanel-stackedPanel, .dx-export-panel {{ overflow-x: auto; }}
/* Rows of fixed-width fields wrap rather than run past the page. */
.dx-scan-panel .widget-hbox, .dx-derived-panel .widget-hbox, .dx-data-panel .widget-hbox {{ flex-wrap: wrap; }}
.dx-root .widget-select-multiple .widget-label {{ min-width: max-content; }}
{DOTS_CSS}
{SNAPSHOT_CSS}
</style>"""


class Explorer(w.VBox):
    """The application widget.

    Parameters
    ----------
    scene : Scene
        Starting model.
    data : sequence of DataSet, dict, ObservationSet, path or sequence of paths, optional
        The data to judge the model against (anything :func:`explore` accepts except
        None, which here means no data).
    scheduler : object with ``call_later(delay, fn)``, optional
        Where the debounced recompute waits (default: the running asyncio loop).
    delay : float
        Debounce window, s.
    jobs : {"thread", "sync"}
        How refinements and grid scans run: background threads, or at once (tests).
    workdir : str or os.PathLike, optional
        Folder that relative file names in the panels refer to (saves, imports, loads).
        Default: the current folder (a notebook's own folder); never the package's.

    Attributes
    ----------
    state : ExplorerState
    debouncer : Debouncer
    figures : FigureSet
        Figure objects by name (each made when its page is first built or it is asked for).
    timings : list of float
        Duration of each recompute, s (the benchmark reads it).
    start_page, scan_page, derived_page : StartPage, ScanPage, DerivedPage
        The starting-point, χ² grid and derived-quantities pages.
    """

    #: The figure tabs' pages in order, and their titles.
    PAGE_ORDER = ("interferometry", "spectra", "structure", "start", "scan", "derived")
    PAGE_TITLES = {"interferometry": "interferometry", "spectra": "SED & spectrum", "structure": "disk structure",
                   "start": "starting point", "scan": "χ² grid", "derived": "derived quantities"}
    #: Figure-tab index of each page (the structure page is also used by ``structure_visible``).
    PAGES = {name: k for k, name in enumerate(PAGE_ORDER)}

    def __init__(self, scene, data=None, scheduler=None, delay=0.04, jobs="thread", workdir=None, lenient=False):
        folder = working_folder(workdir)
        data_sets, notes = data_sets_from(() if data is None else data, workdir=folder, lenient=lenient)
        # Relative names typed into any panel resolve against ``workdir`` (app/state/workdir.py).
        self.state = ExplorerState(scene=scene, curve_position_angle=float(scene.position_angle % 180.0),
                                   workdir=str(folder))
        notes = self.state.set_data_sets(data_sets, check=True) + notes
        self.debouncer = Debouncer(self._recompute, delay=delay, scheduler=scheduler)
        self.timings = []
        self.recompute_log = []
        self._pin_cache = {}
        self._structure_stale = set()
        #: Compute the image and profiles even while their page is hidden (tests, benchmark).
        self.render_hidden = False
        self._data_generation = 0
        self.view = None
        self.frame = None
        self._snapshot = None

        # figures
        # In the order a recompute sends their updates: the first page's figures first, so
        # the page draws what is on screen before the hidden pages' updates arrive.
        # Each is made when its page is built or code asks for it (FigureSet).
        self._pins_drawn = []
        self.figures = FigureSet({"vis2": Vis2Figure, "t3": ClosureFigure, "visamp": VisAmpFigure,
                                  "corrflux_data": CorrFluxPointsFigure, "diffphi": DiffPhaseFigure,
                                  "corrflux": CorrelatedFluxFigure, "sed": SedFigure, "spectrum": SpectrumFigure,
                                  "profiles": ProfilesFigure, "image": ImageFigure}, self._catch_up)
        self.chi2 = Chi2Table()

        # controls
        st = self.state
        self.star_panel = StarPanel(st)
        self.geometry_panel = GeometryPanel(st)
        self.extended_panel = ExtendedPanel(st)
        # Long jobs (refinement, scans, composition solves) run in background threads
        # unless ``jobs="sync"``.
        self._jobs = jobs
        self.ring_deck = RingDeck(st, comparison=self._comparison, runner=jobs)
        # Pages other than the first of each tab bar are built when first opened or first
        # used from code (see LazyPage): a new browser page then receives and draws
        # only the widgets it shows.
        self._lazy = {"data": LazyPage(self._build_data_page), "pins": LazyPage(self._build_pins_page),
                      "spectra": LazyPage(self._build_spectra_page),
                      "structure": LazyPage(self._build_structure_page),
                      "start": LazyPage(self._build_start_page), "scan": LazyPage(self._build_scan_page),
                      "derived": LazyPage(self._build_derived_page)}
        self.message_area = w.HTML()
        self.message_area.add_class("dx-message")
        st.observe(self._on_message, "message")

        self.curve_pa = ParamControl(_CURVE_PA_SPEC, st.curve_position_angle,
                                     lambda v: st.set_view(curve_position_angle=v), css="dx-curve-pa")
        self.image_wl = ParamControl(_WAVELENGTH_SPEC, st.image_wavelength,
                                     lambda v: st.set_view(image_wavelength=v), css="dx-image-wl")
        self.profile_wl = ParamControl(_WAVELENGTH_SPEC, st.profile_wavelength,
                                       lambda v: st.set_view(profile_wavelength=v), css="dx-profile-wl")
        toggles = {}
        for name, text in (("log_sed_x", "log λ"), ("log_sed_y", "log F_ν"), ("log_vis2", "log V²"),
                           ("log_profiles", "log r")):
            tb = w.ToggleButton(value=getattr(st, name), description=text, layout={"width": "74px"})
            w.link((tb, "value"), (st, name))
            toggles[name] = tb
        self.toggles = toggles

        self._layout()
        # The one observer: every state change except the message goes through the debouncer.
        st.observe(self._on_state_change)
        self._recompute({"observations", "scene", "pins", "log_sed_x", "log_vis2", "log_profiles"})
        warned = [f"{d.label}: {x}" for d in data_sets for x in d.warnings] + notes
        left_out = [str(x) for d in data_sets for x in d.not_judged]
        said = ([f"{len(warned)} warning(s) about the data: " + " | ".join(warned)] if warned else []) + (
            ["not judged: " + " | ".join(left_out)] if left_out else [])
        if said:
            st.show_message("; ".join(said))

    # ------------------------------------------------------------------ layout
    def _layout(self):
        lazy = self._lazy
        model_page = w.VBox([self.star_panel, self.geometry_panel, self.extended_panel, self.ring_deck])
        self.control_tabs = w.Tab([model_page, lazy["data"], lazy["pins"]], titles=("model", "data", "pins & session"))
        self.control_tabs.layout = {"width": "400px", "min_width": "400px"}
        self.control_tabs.add_class("dx-controls")
        self.control_tabs.observe(self._on_control_tab_change, "selected_index")
        self.figure_tabs = w.Tab([self._build_interferometry_page()] + [lazy[name] for name in self.PAGE_ORDER[1:]],
                                 titles=tuple(self.PAGE_TITLES[name] for name in self.PAGE_ORDER))
        # min_width 0: the figures take the width there is (they shrink to their own minimum).
        self.figure_tabs.layout = {"flex": "1 1 auto", "min_width": "0"}
        self.figure_tabs.add_class("dx-pages")
        self.figure_tabs.observe(self._on_tab_change, "selected_index")
        # In a narrow output the figures may take the whole width: the controls fold away.
        self.show_controls = w.ToggleButton(value=True, description="controls", icon="sliders",
                                            tooltip="show or hide the control column")
        self.show_controls.add_class("dx-show-controls")
        self.show_controls.observe(self._on_show_controls, "value")
        header = w.HBox([w.HTML(f"{_CSS}<span style='font-size:18px;font-weight:700'>diskexplorer</span>"
                                f"<span style='color:{MUTED};margin-left:10px'>inner-disk models against "
                                "interferometry, SED and the silicate band</span>"),
                         self.show_controls], layout={"justify_content": "space-between", "align_items": "center"})
        header.add_class("dx-header")
        right = w.VBox([w.HBox([self.chi2.widget], layout={"padding": "4px 0"}), self.figure_tabs],
                       layout={"flex": "1 1 auto", "min_width": "0"})
        super().__init__([header, self.message_area, w.HBox([self.control_tabs, right], layout={"width": "100%"})])
        self.add_class("dx-root")

    def _on_show_controls(self, change):
        self.control_tabs.layout.display = None if change["new"] else "none"

    # ------------------------------------------------------------------ pages
    # Each builder returns (page widget, {attribute: object}); the objects become the
    # attributes of the same names (``app.start_page``...). A page added to the figure
    # tabs needs an entry in PAGE_ORDER / PAGE_TITLES and, unless it is the first, a
    # LazyPage in __init__.
    def _build_interferometry_page(self):
        f = self.figures
        # |V|, correlated-flux and differential-phase figures show only when the data hold them.
        return w.VBox([w.HBox([self.curve_pa, self.toggles["log_vis2"]]), f["vis2"].widget, f["t3"].widget,
                       f["visamp"].widget, f["corrflux_data"].widget, f["diffphi"].widget, f["corrflux"].widget])

    def _build_spectra_page(self):
        f = self.figures
        page = w.VBox([w.HBox([self.toggles["log_sed_x"], self.toggles["log_sed_y"]]), f["sed"].widget,
                       f["spectrum"].widget])
        return page, {}

    def _build_structure_page(self):
        f = self.figures
        page = w.VBox([w.HBox([w.HTML("<b>image</b>", layout={"width": "50px"}), self.image_wl]),
                       f["image"].widget,
                       w.HBox([w.HTML("<b>profiles</b>", layout={"width": "60px"}), self.profile_wl,
                               self.toggles["log_profiles"]]),
                       f["profiles"].widget])
        return page, {}

    def _build_data_page(self):
        panel = DataPage(self.state, on_species_added=self._on_species_added)
        return panel, {"data_page": panel}

    def _build_pins_page(self):
        board, session = PinBoard(self.state), SessionBox(self.state)
        return w.VBox([board, session]), {"pin_board": board, "session_box": session}

    def _comparison(self):
        return self.view.comparison if self.view else None

    def _build_start_page(self):
        panel = StartPage(self.state, comparison=self._comparison,
                            result=lambda: self.frame.result if self.frame else None,
                            visible=lambda: self._page_visible("start"), runner=self._jobs)
        return panel, {"start_page": panel}

    def _build_scan_page(self):
        panel = ScanPage(self.state, comparison=self._comparison, runner=self._jobs)
        return panel, {"scan_page": panel}

    def _build_derived_page(self):
        panel = DerivedPage(self.state, visible=lambda: self._page_visible("derived"))
        return panel, {"derived_page": panel}

    def _part(self, page, name):
        return self._lazy[page].part(name)

    data_page = property(lambda self: self._part("data", "data_page"), doc="The data page (DataPage).")
    pin_board = property(lambda self: self._part("pins", "pin_board"), doc="The pins (PinBoard).")
    session_box = property(lambda self: self._part("pins", "session_box"), doc="Sessions (SessionBox).")
    start_page = property(lambda self: self._part("start", "start_page"),
                            doc="The starting-point page (StartPage).")
    scan_page = property(lambda self: self._part("scan", "scan_page"), doc="The χ² grid page (ScanPage).")
    derived_page = property(lambda self: self._part("derived", "derived_page"),
                             doc="The derived-quantities page (DerivedPage).")

    def _built(self, page):
        return self._lazy[page].built

    def _on_control_tab_change(self, change):
        tabs = self.control_tabs
        page = tabs.children[tabs.selected_index] if tabs.selected_index is not None else None
        if isinstance(page, LazyPage) and not page.built:
            page.build()
            if page is self._lazy["pins"] and self.frame is not None:
                self._show_pin_totals()

    # ------------------------------------------------------------------ the loop
    def _on_species_added(self, name):
        for card in self.ring_deck.cards:
            if card.mixture_built:   # an editor built later lists the species itself
                card.mixture.add_species(name)

    def _on_message(self, change):
        text = change["new"]
        self.message_area.value = "" if not text else (
            f"<div style='background:#fff4e0;border-left:3px solid #E69F00;padding:3px 8px'>"
            f"{__import__('html').escape(text)}</div>")

    #: Whether displaying the explorer also writes its picture for the saved notebook
    #: (:mod:`~diskexplorer.app.snapshot`); a served page has no saved notebook.
    show_snapshot = True

    def _ipython_display_(self):
        """The widget view, then (in a notebook) the picture a saved notebook keeps of it."""
        from IPython.display import publish_display_data

        bundle = self._repr_mimebundle_()
        data, metadata = bundle if isinstance(bundle, tuple) else (bundle, {})
        publish_display_data(data, metadata=metadata)
        if self.show_snapshot:
            if self._snapshot is None:
                self._snapshot = Snapshot(self, self.debouncer.scheduler)
            self._snapshot.show()

    def snapshot(self):
        """Redraw now the picture of the explorer that a saved notebook shows.

        The explorer redraws it by itself a few seconds after each change has settled
        (:data:`~diskexplorer.app.snapshot.SNAPSHOT_DELAY`); call this right before saving
        to be sure it shows the last change. Nothing happens before the explorer is displayed.
        """
        self.flush()
        if self._snapshot is not None:
            self._snapshot.draw()

    def _on_state_change(self, change):
        if change["name"] != "message":
            self.debouncer.trigger(change["name"])

    def flush(self):
        """Run a pending recompute now (tests and scripts)."""
        self.debouncer.flush()

    def judgement(self):
        """The current model judged against the loaded data, as the χ² table shows it.

        A change still waiting for the debouncer is computed first, so the result belongs
        to ``state.scene`` and to the data after the app's filters (bands, instruments,
        baselines) with the weights of the starting-point page's set-up as the table uses them.

        Returns
        -------
        ComparisonResult or None
            ``chi2`` and ``npoints`` per data kind, ``reduced`` (χ²/N), ``total`` (weighted
            sum), ``model`` and ``residuals`` aligned with the data points
            (:class:`~diskexplorer.fitting.ComparisonResult`); None when no data are loaded.

        Examples
        --------
        >>> app = explore(data="my_data/")       # doctest: +SKIP
        >>> print(app.judgement().summary())     # doctest: +SKIP
        """
        self.flush()
        return self.chi2.live

    def _recompute(self, names):
        """The one recompute: from the changed state names, the cheapest tiers that cover them."""
        t0 = time.perf_counter()
        tiers = tiers_for(names)
        st = self.state
        if "data" in tiers:
            self.view = data_view(st.observations, st.photometry, st.spectrum, bands=st.band_filter,
                                instruments=st.instrument_filter, baseline_range=st.baseline_range,
                                bandpass=bandpass_choice(st.data_sets), target=st.target)
            self._data_generation += 1
            self._pin_cache.clear()
            tiers |= {"model", "pins"}
        if "model" in tiers:
            self.frame = self._frame(st.scene)
        elif "curve" in tiers:
            self.frame.curve = self._curve(st.scene)
            tiers.add("pins")   # pins draw their curves along the same position angle
        if "pins" in tiers:
            self._pins_drawn = self._pin_frames()
        # Figures in the order of the figure set: the V² curve first, then the rest of the
        # first page, so the page redraws what is on screen before the hidden pages' updates.
        for name, fig in self.figures.items():
            self._draw(name, fig, tiers)
        structure = _STRUCTURE if "model" in tiers else tuple(k for k in _STRUCTURE if k in tiers)
        if structure:
            self._update_structure(structure)
        if "model" in tiers:
            self.chi2.update_model(self.frame.result)
        if "pins" in tiers:
            self._show_pin_totals()
        if "model" in tiers and self._built("scan"):
            self.scan_page.sync_paths()
        if tiers & {"model", "export"} and self._built("start"):
            self.start_page.refresh()
        if tiers & {"model", "derived"} and self._built("derived"):
            self.derived_page.refresh()
        self.timings.append(time.perf_counter() - t0)
        self.recompute_log.append(sorted(tiers))
        if self._snapshot is not None:
            self._snapshot.changed()

    def _draw(self, name, fig, tiers):
        """Bring figure ``name`` up to date for ``tiers``: the one draw path of every figure.

        The image and the profiles are not drawn here: they cost more than every other
        view together and are computed by :meth:`_update_structure` while their page shows.
        """
        if "data" in tiers:
            fig.update_data(self.view)
        if tiers & {"data", "style"}:
            fig.apply_style(self.state)
        if self.frame is not None and name not in _STRUCTURE:
            if name == "vis2" and tiers & {"model", "curve"}:
                fig.update_curve(self.frame)
            if "model" in tiers:
                fig.update_model(self.frame)
        if "pins" in tiers:
            fig.update_pins(self._pins_drawn)

    def _catch_up(self, name, fig):
        """Draw the current data, style, model and pins on a figure made just now."""
        if self.view is None:
            return   # made while the explorer is built: the first recompute draws it
        self._draw(name, fig, {"data", "style", "model", "pins"})
        if name in _STRUCTURE and self.frame is not None:
            self._structure_stale.add(name)   # computed when their page is shown

    def _curve(self, scene):
        return model_curve(scene, self.view, self.state.curve_position_angle)

    def _frame(self, scene):
        return make_frame(scene, self.view, self.state.curve_position_angle)

    @property
    def structure_visible(self):
        """Whether the disk-structure page (image, profiles) is on screen."""
        return self._page_visible("structure")

    def _page_visible(self, page):
        # Pages that are not shown are refreshed when they are opened, not on every change.
        tabs = getattr(self, "figure_tabs", None)
        if tabs is None:
            return self.render_hidden
        return tabs.selected_index == self.PAGES[page] or self.render_hidden

    def _update_structure(self, which=("image", "profiles")):
        # Image and profiles cost more than every other view together; they are computed
        # only while their page is shown, and caught up when it is opened.
        if not self.structure_visible:
            self._structure_stale.update(which)
            return
        st, f = self.state, self.figures
        if "image" in which:
            self.frame.image = image(st.scene, st.image_wavelength)
            f["image"].update_model(self.frame)
        if "profiles" in which:
            self.frame.profiles = profiles(st.scene, st.profile_wavelength)
            f["profiles"].update_model(self.frame)
        self._structure_stale.difference_update(which)

    def _on_tab_change(self, change):
        page = self.figure_tabs.children[change["new"]] if change["new"] is not None else None
        if isinstance(page, LazyPage) and not page.built:
            page.build()
            # A panel built now catches up with the state (deferred updates arrive on_shown).
            if page is self._lazy["start"] and self.frame is not None:
                self.start_page.refresh()
            if page is self._lazy["derived"] and self.frame is not None:
                self.derived_page.refresh()
        if self.structure_visible and self._structure_stale and self.frame is not None:
            self._update_structure(tuple(self._structure_stale))
        if self.frame is not None:
            if self._page_visible("start"):
                self.start_page.on_shown()
            if self._page_visible("derived"):
                self.derived_page.on_shown()
        if self._page_visible("scan") and self._built("scan"):
            self.scan_page.on_shown()

    def _pin_frames(self):
        """(name, colour, Frame) of each pin; a pin's frame is kept while data and curve hold."""
        pins = []
        for k, p in enumerate(self.state.pins):
            key = (id(p["scene"]), self._data_generation, self.state.curve_position_angle)
            frame = self._pin_cache.get(key)
            if frame is None:
                frame = self._frame(p["scene"])
                self._pin_cache[key] = frame
            pins.append((p["name"], pin_colour(k), frame))
        return pins

    def _show_pin_totals(self):
        pins = self._pins_drawn
        self.chi2.update_pins([(n, c, fr.result) for n, c, fr in pins])
        if not self._built("pins"):
            return  # the board shows the totals when its page is first opened
        self.pin_board.show_totals([fr.result.total / fr.result.n_total if fr.result is not None and fr.result.n_total
                                    else None for _, _, fr in pins])


def explore(data=None, scene=None, *, scheduler=None, delay=0.04, jobs="thread", workdir=None, lenient=False):
    """Open the explorer.

    Parameters
    ----------
    data : path, sequence of paths, ObservationSet or dict, optional
        The data to judge the model against:

        * a file or a folder, or a list of them: OIFITS files, photometry tables and
          spectra, each recognised by its content (a folder's other files are skipped
          with a note); relative paths refer to ``workdir``;
        * an :class:`~diskexplorer.data.ObservationSet` (interferometry only);
        * a dict ``{"observations": ObservationSet, "photometry": Dataset, "spectrum":
          Dataset, "paths": {...}}`` as :func:`diskexplorer.sample.load_sample_data`
          returns;
        * an empty list: no data.

        Default (None): the sample data. When data are given, nothing of the sample is
        loaded.
    scene : Scene, optional
        Starting model. Default: the sample's scene (:func:`diskexplorer.sample.demo_scene`:
        an invented 7900 K, 21 L☉ star at 162 pc with an inner rim at 0.34 au and an outer
        ring beyond a gap), also when ``data`` are the user's: a sensible model of a young
        star's inner disk to start from, not a fit to them.
    scheduler : optional
        Debounce scheduler (tests pass a :class:`~diskexplorer.app.state.debounce.ManualScheduler`).
    delay : float
        Debounce window in s.
    jobs : {"thread", "sync"}
        Whether refinements and scans run in background threads (the app) or at once (tests).
    workdir : str or os.PathLike, optional
        Folder that relative file names typed in the app refer to; saves show the full path.
        Default: the current folder (the notebook's); ``diskexplorer demo`` passes the folder
        it was started from.
    lenient : bool
        Read what conforms in OIFITS files that do not conform to the standard (each defect
        is listed as a warning of the file) instead of refusing them. Either way, a file that
        cannot be read is listed with its defects and the others are loaded.

    Returns
    -------
    Explorer
        A displayable ipywidgets container; :meth:`Explorer.judgement` gives the χ² of its
        current model.

    Raises
    ------
    DataError
        A given file that cannot be read or that the model cannot be computed with (none
        is loaded then; the message names it), a folder without data, or ``data`` of
        another type.

    Examples
    --------
    >>> explore(data="my_data/")                       # doctest: +SKIP
    >>> explore(data=["night1.fits", "sed.csv"])       # doctest: +SKIP
    """
    from .. import sample

    if data is None:
        data = sample.load_sample_data()
    if scene is None:
        scene = sample.demo_scene()
    return Explorer(scene, data, scheduler=scheduler, delay=delay, jobs=jobs, workdir=workdir, lenient=lenient)
