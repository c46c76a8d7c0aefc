"""The starting-point panel: free/fixed, bounds and priors per parameter, the live document,
save (asking before overwriting), the Python snippet, import, and a quick local refinement.

Mass fractions (``rings.<k>.dust.<component>``) are rows like every other parameter; their
prior is the ring's Dirichlet prior, and the row's first prior box holds the component's
concentration α (1: flat). A ring's free fractions move together on the simplex (see
:mod:`~diskexplorer.fitting.vector`), so a ring needs two free fractions or none.

Everything the user sets here lives in ``state.fit_setup`` (the single source of truth, so
sessions save it); the table writes there, and the explorer's one recompute redraws the
document. Refinement runs :func:`~diskexplorer.fitting.refine` in a background thread
(:class:`~diskexplorer.app.state.jobs.JobRunner`); its result is only shown until the user
accepts it into the model or discards it.
"""
from __future__ import annotations

import dataclasses
import html
import json
import math

import ipywidgets as w

from ...errors import DiskExplorerError
from ...fitting.data_kinds import KIND_NAMES, WEIGHTED_KINDS
from ...fitting.paths import get_value, is_fraction_path, parameter_paths, spec_for
from ...fitting.priors import FRACTION_PRIOR, PRIOR_KINDS, is_fraction_spec
from ...fitting.vector import resolve_limits
from ..state.jobs import JobRunner, Throttle
from ..controls.param_control import unit_text
from ..figures.base import assign as _assign
from ..state.echo_guard import EchoGuard
from ..palette import ACCENT, INK, MUTED, OKABE_ITO
from .job_buttons import JobButtons, comparison_to_judge
from .save_box import SaveBox
from ..state.fit_setup import clean_fit_setup, describe_state_data, doc_free
from ..state.workdir import path_checker

__all__ = ["StartPage", "WEIGHT_KINDS"]

#: Data kinds whose weight the panel sets, with the words shown for them.
WEIGHT_KINDS = tuple((k, KIND_NAMES[k]) for k in WEIGHTED_KINDS)

_PRE = (f"margin:0;padding:6px 8px;font-size:11px;line-height:1.35;background:#f4f2ec;color:{INK};"
        "border:1px solid #e6e4de;max-height:560px;overflow:auto;white-space:pre")
# Column widths: 590 px in all, so the table fits a 1000 px notebook output beside the
# control column (long paths wrap inside their cell).
_W = {"name": "166px", "value": "56px", "free": "34px", "lo": "64px", "hi": "64px", "prior": "96px",
      "mean": "58px", "sigma": "52px"}


def _cell(key, **more):
    """Layout of a table cell of column ``key``: its width, never shrunk or grown (the header
    and every row then line up)."""
    return {"width": _W[key], "min_width": _W[key], "flex": "0 0 auto", **more}


def _fmt(x):
    if x is None or not math.isfinite(x):
        return "–"
    return f"{x:.4g}"


class _Row:
    """The widgets of one parameter's row."""

    def __init__(self, path, on_edit):
        spec = spec_for(path)
        self.path = path
        unit = unit_text(spec.unit)
        self.name = w.HTML(f"<span style='overflow-wrap:anywhere' title='{html.escape(spec.description)}'>"
                           f"{html.escape(path)}</span>"
                           + (f" <span style='color:{MUTED}'>[{html.escape(unit)}]</span>" if unit else ""),
                           layout=_cell("name"))
        self.value = w.HTML(layout=_cell("value"))
        self.free = w.Checkbox(value=False, indent=False, layout=_cell("free"))
        self.lo = w.FloatText(layout=_cell("lo"))
        self.hi = w.FloatText(layout=_cell("hi"))
        self.fraction = is_fraction_spec(spec)
        # A fraction's prior is its ring's Dirichlet: the only kind offered; "mean" holds α.
        kinds = [FRACTION_PRIOR] if self.fraction else [k for k in PRIOR_KINDS if k != FRACTION_PRIOR]
        self.prior = w.Dropdown(options=kinds, layout=_cell("prior"))
        self.mean = w.FloatText(layout=_cell("mean", visibility="hidden"),
                                **({"tooltip": "concentration α of the ring's Dirichlet prior (1: flat)"}
                                   if self.fraction else {}))
        self.sigma = w.FloatText(layout=_cell("sigma", visibility="hidden"))
        for name in ("free", "lo", "hi", "prior", "mean", "sigma"):
            getattr(self, name).observe((lambda n: lambda ch: on_edit(self, n))(name), "value")
        # No shrinking: inside the scrolling table a flex row would otherwise be squeezed.
        self.box = w.HBox([self.name, self.value, self.free, self.lo, self.hi, self.prior, self.mean, self.sigma],
                          layout={"align_items": "center", "flex": "0 0 auto"})
        self.box.add_class("dx-export-row")


class StartPage(w.VBox):
    """Starting point for a formal fit: the table, the document, save/import, refinement.

    Parameters
    ----------
    state : ExplorerState
    comparison : callable, optional
        Returns the :class:`~diskexplorer.fitting.Comparison` of the loaded (filtered) data,
        or None without data; refinement uses it.
    result : callable, optional
        Returns the live :class:`~diskexplorer.fitting.ComparisonResult` (or None); its χ²
        goes into the document's ``judgement``.
    visible : callable, optional
        Whether the panel is on screen; while it is not, refreshes are deferred.
    runner : {"thread", "sync"}
        How refinement runs: in a background thread (the app) or at once (tests).

    Attributes
    ----------
    rows : dict of str to _Row
        One row per parameter path (built the first time the panel is shown).
    document : dict or None
        The last document built (None when the set-up is invalid).
    document_error : str
        Why the set-up does not make a document ("" when it does).
    saved_path : str or None
        Where the document was last saved (the snippet refers to it).
    refine_result : RefineResult or None
        The refinement waiting for accept or discard.
    """

    def __init__(self, state, comparison=None, result=None, visible=None, runner="thread"):
        self.state = state
        self._comparison = comparison or (lambda: None)
        self._result = result or (lambda: None)
        self._visible = visible or (lambda: True)
        self.runner = JobRunner(runner)
        self.rows = {}
        self.document = None
        self.document_error = ""
        self.saved_path = None
        self.snippet = ""
        self.refine_result = None
        self._refine_start = None
        self._quiet = EchoGuard()
        self._stale = True
        self._throttle = Throttle(0.2)

        head = w.HBox([w.HTML(f"<b>{t}</b>", layout=_cell(k))
                       for k, t in (("name", "parameter"), ("value", "value"), ("free", "free"), ("lo", "lower"),
                                    ("hi", "upper"), ("prior", "prior"), ("mean", "mean / α"), ("sigma", "σ"))])
        head.add_class("dx-export-head")
        head.layout.flex = "0 0 auto"
        # The header is the table's first row, so a narrow page scrolls both together.
        self._head = head
        self.table = w.VBox([head], layout={"max_height": "470px", "overflow": "auto", "width": "100%",
                                            "max_width": "610px"})
        self.fix_all_button = w.Button(description="fix all", layout={"width": "70px"})
        self.fix_all_button.on_click(lambda b: self._set_setup(free=[]))

        # refinement
        self.weights = {k: w.BoundedFloatText(value=1.0, min=0.0, max=1e6, description=label,
                                              style={"description_width": "initial"}, layout={"width": "170px"})
                        for k, label in WEIGHT_KINDS}
        for box in self.weights.values():
            box.observe(lambda ch: self._on_weight(), "value")
        self.job_buttons = JobButtons(state, "refine free parameters", self.start_refine, self.cancel_refine,
                                      start_width="190px", progress_class="dx-refine-progress")
        self.refine_button = self.job_buttons.start_button
        self.cancel_button = self.job_buttons.cancel_button
        self.progress = self.job_buttons.progress
        self.result_html = w.HTML()
        self.accept_button = w.Button(description="accept into the model", button_style="success",
                                      layout={"width": "180px"})
        self.discard_button = w.Button(description="discard", layout={"width": "80px"})
        self.result_actions = w.HBox([self.accept_button, self.discard_button], layout={"display": "none"})
        self.accept_button.on_click(lambda b: self.accept())
        self.discard_button.on_click(lambda b: self.discard())

        # document, save, import
        self.import_button = w.Button(description="import", layout={"width": "70px"})
        self.import_button.on_click(lambda b: self.import_start())
        self.save_box = SaveBox(state, "diskexplorer-start.json", "starting point", self._write,
                                actions=[self.import_button], width="230px")
        self.path, self.save_button, self.confirm = self.save_box.path, self.save_box.save_button, self.save_box.confirm
        self.path.add_class("dx-start-path")
        self.save_button.add_class("dx-start-save")
        # the confirm row's buttons, by the names tests and callers use
        self.overwrite_button, self.keep_button = self.confirm.overwrite_button, self.confirm.keep_button
        self.view = w.ToggleButtons(options=[("document", "document"), ("Python snippet", "snippet")],
                                    value="document", style={"button_width": "110px"})
        self.view.observe(lambda ch: self._show_view(), "value")
        self.viewer = w.HTML(layout={"width": "100%"})
        self.viewer.add_class("dx-start-document")
        self.notes = w.HTML()

        left = w.VBox([w.HTML("<div class='dx-section-title'>parameters of the starting point</div>"),
                       self.table, self.fix_all_button,
                       w.HTML("<div class='dx-section-title'>quick local refinement</div>"),
                       w.HBox(list(self.weights.values()), layout={"flex_flow": "row wrap"}),
                       w.HBox([self.refine_button, self.cancel_button, self.progress],
                              layout={"align_items": "center", "flex_flow": "row wrap"}),
                       self.result_html, self.result_actions],
                      layout={"flex": "1 1 610px", "max_width": "700px", "min_width": "0"})
        # The document goes beside the table where there is room, under it where there is not.
        right = w.VBox([w.HTML("<div class='dx-section-title'>document</div>"),
                        self.save_box,
                        self.view, self.viewer, self.notes],
                       layout={"flex": "1 1 300px", "min_width": "280px", "padding": "0 0 0 10px"})
        super().__init__([w.HBox([left, right], layout={"width": "100%", "flex_flow": "row wrap"})])
        self.add_class("dx-export-panel")
        self._sync_weights()

    # ------------------------------------------------------------------ set-up
    @property
    def setup(self):
        """The state's starting-point set-up (a cleaned copy)."""
        return clean_fit_setup(self.state.fit_setup)

    @property
    def free_paths(self):
        """Free parameter paths of the current scene, in document order."""
        free = set(self.setup["free"])
        return [p for p in parameter_paths(self.state.scene) if p in free]

    def bounds_for(self, path):
        """(lo, hi) of ``path``: the user's, else the declared default around the current value."""
        return self._limits(path)[:2]

    def prior_for(self, path):
        """The prior of ``path`` as a dict (the user's, else the declared default)."""
        return self._limits(path)[2].as_dict()

    def _limits(self, path):
        setup = self.setup
        return resolve_limits(spec_for(path), get_value(self.state.scene, path), setup["bounds"].get(path),
                              setup["priors"].get(path), path, check=False)

    def _set_setup(self, **changes):
        self.state.set_fit_setup({**self.setup, **changes})

    def _on_weight(self):
        if self._quiet:
            return
        weights = {k: float(box.value) for k, box in self.weights.items()}
        # Weights of 1 are the default: store only what differs, so sessions stay small.
        self._set_setup(weights={k: v for k, v in weights.items() if v != 1.0})

    def _on_edit(self, row, name):
        if self._quiet:
            return
        path = row.path
        setup = self.setup
        if name == "free":
            free = [p for p in setup["free"] if p != path] + ([path] if row.free.value else [])
            self._set_setup(free=free)
        elif name in ("lo", "hi"):
            self._set_setup(bounds={**setup["bounds"], path: [float(row.lo.value), float(row.hi.value)]})
        else:
            kind = row.prior.value
            entry = {"kind": kind}
            if kind == FRACTION_PRIOR:
                alpha = float(row.mean.value)
                entry["concentration"] = alpha if math.isfinite(alpha) and alpha > 0 else 1.0
            if kind == "normal":
                mean, sigma = float(row.mean.value), float(row.sigma.value)
                if name == "prior" or not sigma > 0:
                    # A first choice of "normal" starts centred on the current value, 10 % of the range wide.
                    lo, hi = self.bounds_for(path)
                    mean = get_value(self.state.scene, path) if name == "prior" else mean
                    sigma = sigma if sigma > 0 else (hi - lo) / 10.0
                entry.update(mean=mean, sigma=sigma)
            self._set_setup(priors={**setup["priors"], path: entry})

    # ------------------------------------------------------------------ view
    def refresh(self):
        """Show the state: rows, values and the document (deferred while the panel is hidden)."""
        if not self._visible():
            self._stale = True
            return
        self._stale = False
        self._sync_rows()
        self._sync_weights()
        self.update_document()

    def on_shown(self):
        """The panel came on screen: catch up if something changed meanwhile."""
        if self._stale:
            self.refresh()

    def _sync_weights(self):
        weights = self.setup["weights"]
        with self._quiet:
            for k, box in self.weights.items():
                v = float(weights.get(k, 1.0))
                if box.value != v:
                    box.value = v

    def _sync_rows(self):
        scene = self.state.scene
        paths = parameter_paths(scene)
        if list(self.rows) != paths:
            # Ring added, removed or the scene replaced: rows follow the parameter list.
            self.rows = {p: self.rows.get(p) or _Row(p, self._on_edit) for p in paths}
            self.table.children = [self._head] + [r.box for r in self.rows.values()]
        setup = self.setup
        free = set(setup["free"])
        with self._quiet:
            for p, row in self.rows.items():
                lo, hi = self.bounds_for(p)
                prior = self.prior_for(p)
                value = get_value(scene, p)
                inside = lo <= value <= hi
                text = _fmt(value) if inside else f"<span style='color:{OKABE_ITO['vermillion']}' " \
                                                  f"title='outside the bounds'>{_fmt(value)} ⚠</span>"
                _assign(row.value, value=text)
                _assign(row.free, value=p in free)
                _assign(row.lo, value=float(lo))
                _assign(row.hi, value=float(hi))
                _assign(row.prior, value=prior["kind"])
                normal = prior["kind"] == "normal"
                if normal:
                    _assign(row.mean, value=float(prior["mean"]))
                    _assign(row.sigma, value=float(prior["sigma"]))
                elif prior["kind"] == FRACTION_PRIOR:
                    _assign(row.mean, value=float(prior["concentration"]))
                vis = "visible" if normal else "hidden"
                mean_vis = "visible" if normal or row.fraction else "hidden"
                if row.mean.layout.visibility != mean_vis:
                    row.mean.layout.visibility = mean_vis
                if row.sigma.layout.visibility != vis:
                    row.sigma.layout.visibility = vis

    def build_document(self):
        """The starting-point document of the live scene with this set-up.

        Returns
        -------
        dict
            From :func:`~diskexplorer.fitting.export_start`.

        Raises
        ------
        SeedError
            Bounds that do not hold the current value, priors that do not fit, …
        """
        from ...fitting.start_document import export_start

        setup = self.setup
        scene = self.state.scene
        paths = set(parameter_paths(scene))
        weights = {k: setup["weights"].get(k, 1.0) for k, _ in WEIGHT_KINDS}
        data, self._data_notes = describe_state_data(self.state, weights)
        result = self._result()
        if result is not None:
            # The judgement is recorded with the weights the document asks the fit to use.
            result = dataclasses.replace(result, weights={k: weights.get(k, v) for k, v in result.weights.items()})
        return export_start(scene, free=[p for p in self.free_paths],
                            bounds={p: tuple(b) for p, b in setup["bounds"].items() if p in paths},
                            priors={p: v for p, v in setup["priors"].items() if p in paths},
                            data=data, comparison_result=result)

    def update_document(self):
        """Rebuild the document and show it (or why it cannot be built)."""
        self._data_notes = []
        try:
            self.document = self.build_document()
            self.document_error = ""
        except DiskExplorerError as exc:
            self.document = None
            self.document_error = str(exc)
        self._show_view()

    def _show_view(self):
        if self.view.value == "snippet":
            body = (html.escape(self.snippet) if self.snippet else
                    f"<span style='color:{MUTED}'>save the document first: the snippet reads it from its file</span>")
        elif self.document is None:
            body = (f"<span style='color:{OKABE_ITO['vermillion']}'>no document: "
                    f"{html.escape(self.document_error)}</span>")
        else:
            body = html.escape(json.dumps(self.document, indent=1, ensure_ascii=False))
        _assign(self.viewer, value=f"<pre style='{_PRE}'>{body}</pre>")
        n = len(self.free_paths)
        notes = [f"{n} free parameter{'s' if n != 1 else ''}"] + list(getattr(self, "_data_notes", []))
        _assign(self.notes, value=f"<div style='font-size:11px;color:{MUTED}'>" + "<br>".join(map(html.escape, notes))
                + "</div>")

    # ------------------------------------------------------------------ save / import
    def save(self, overwrite=False):
        """Write the document to the path box; an existing file needs explicit confirmation.

        Returns
        -------
        bool
            Whether the file was written. An existing file is never replaced unless
            ``overwrite`` (the "overwrite" button) is given.
        """
        return self.save_box.save(overwrite)

    def _write(self, path, overwrite):
        from ...fitting.snippet import make_snippet
        from ...fitting.start_document import write_start

        doc = self.build_document()
        written = write_start(path, doc, overwrite=overwrite)
        self.saved_path = written
        try:
            self.snippet = make_snippet(written)
        except DiskExplorerError as exc:  # written but does not read back: say so, keep the file
            self.snippet = ""
            return f"saved {written}, but it does not read back: {exc}"
        self._show_view()
        return (f"starting point saved to {written} ({len(doc_free(doc))} free parameters); "
                "its Python snippet is under “Python snippet”")

    def import_start(self, source=None):
        """Read a starting point (path box, or ``source``) into the model and the table.

        On any error the message area says why and neither the model nor the set-up changes.

        Returns
        -------
        bool
        """
        from ...fitting.start_import import read_start

        try:
            if source is None:
                source = str(self.save_box.target())
            start = read_start(source, check_path=path_checker(self.state))
        except (DiskExplorerError, OSError, ValueError, KeyError, TypeError) as exc:
            self.state.show_message(f"starting point not imported: {exc}")
            return False
        try:
            self.state.apply_start(start)
        except DiskExplorerError:
            return False   # the state is unchanged and its message says why
        where = source if isinstance(source, str) else "the document"
        extra = "" if start.data.empty else "; the data it names are not loaded (use the data tab)"
        self.state.show_message(f"starting point imported from {where}: {len(start.free)} free parameters{extra}")
        return True

    # ------------------------------------------------------------------ refinement
    def start_refine(self, wait=False):
        """Refine the free parameters from the live scene (in the background unless ``wait``).

        Returns
        -------
        bool
            Whether a refinement was started.
        """
        from ...fitting.refine import refine

        if self.runner.busy:
            return False
        free = self.free_paths
        if not free:
            self.state.show_message("tick at least one parameter as free to refine it")
            return False
        comparison = comparison_to_judge(self.state, self._comparison(), "load data to refine against")
        if comparison is None:
            return False
        scene = self.state.scene
        bounds = {p: self.bounds_for(p) for p in free}
        weights = {k: float(box.value) for k, box in self.weights.items()}
        # All weights 1 is the comparison's own weighting: passing None lets refine reuse the
        # bound comparison instead of building a new one (an Observer per refinement).
        weights = None if all(v == 1.0 for v in weights.values()) else weights
        self._refine_start = scene
        self.discard(quiet=True)
        self.job_buttons.started("starting …")
        runner = self.runner
        throttle = self._throttle

        def progress(i, chi2):
            if throttle.ready():
                runner.post(lambda: setattr(self.progress, "value", f"evaluation {i} · best χ² {chi2:,.6g}"))

        return runner.run(lambda: refine(scene, comparison, free, weights=weights, bounds=bounds, progress=progress,
                                         cancel=runner.cancelled),
                          self._finish, name="diskexplorer-refine", wait=wait)

    def refine_now(self):
        """Run a refinement synchronously, whatever the runner (tests, scripts)."""
        return self.start_refine(wait=True)

    def cancel_refine(self):
        """Stop a running refinement; the best state so far is offered as its result."""
        self.runner.cancel()
        self.job_buttons.cancelling()

    def _finish(self, result, error):
        if not self.job_buttons.ended(error, "refinement"):
            return
        self.refine_result = result
        self.progress.value = f"done: {result.nfev} model evaluations"
        self.result_html.value = self._result_table(result)
        self.result_actions.layout.display = None

    def _result_table(self, res):
        start = self._refine_start
        rows = []
        for p, err in zip(res.parameters, res.uncertainties):
            unit = html.escape(unit_text(p.unit))
            at_edge = " ⚠ at a bound" if (math.isclose(p.value, p.lo) or math.isclose(p.value, p.hi)) else ""
            if is_fraction_path(p.path) and p.value == 0.0:
                # The data do not want this component: a result, not a bound artefact.
                at_edge = " exactly 0: leaves the mixture"
            rows.append(f"<tr><td>{html.escape(p.path)}</td><td>{_fmt(get_value(start, p.path))}</td>"
                        f"<td><b>{_fmt(p.value)}</b></td><td>± {_fmt(float(err))}</td><td>{unit}"
                        f"<span style='color:{OKABE_ITO['vermillion']}'>{at_edge}</span></td></tr>")
        colour = OKABE_ITO["bluish_green"] if res.chi2_after < res.chi2_before else MUTED
        return (f"<style>.dx-refine-table td, .dx-refine-table th {{padding: 1px 8px; text-align: right}}"
                f" .dx-refine-table td:first-child {{text-align: left}}</style>"
                f"<div style='font-size:12px;color:{INK}'>χ² {res.chi2_before:,.6g} → "
                f"<b style='color:{colour}'>{res.chi2_after:,.6g}</b> "
                f"<span style='color:{MUTED}'>({html.escape(str(res.message))})</span>"
                f"<table class='dx-refine-table' style='border-collapse:collapse;margin-top:4px'>"
                f"<tr style='color:{ACCENT}'><th align=left>parameter</th><th>start</th><th>refined</th>"
                f"<th>1σ</th><th></th></tr>{''.join(rows)}</table>"
                f"<div style='color:{MUTED};font-size:11px'>1σ from (JᵀJ)⁻¹, not rescaled by χ²/N; "
                "the model is unchanged until you accept</div></div>")

    def accept(self):
        """Put the refined values into the model (and so into the controls).

        Returns
        -------
        bool
        """
        res = self.refine_result
        if res is None:
            return False
        # Only the refined values: anything the user moved while it ran stays as moved.
        try:
            self.state.set_parameters({p.path: p.value for p in res.parameters})
        except DiskExplorerError as exc:
            self.state.show_message(f"refined values not applied: {exc}")
            return False
        self.discard(quiet=True)
        self.state.show_message(f"refined values accepted: χ² {res.chi2_before:,.6g} → {res.chi2_after:,.6g}")
        return True

    def discard(self, quiet=False):
        """Drop the refinement result; the model stays as it is."""
        had = self.refine_result is not None
        self.refine_result = None
        self.result_html.value = ""
        self.result_actions.layout.display = "none"
        if had and not quiet:
            self.progress.value = "result discarded"
