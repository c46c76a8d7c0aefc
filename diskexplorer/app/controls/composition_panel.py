"""A ring card's composition section: solve the ring's mass fractions, accept them, and
compare two featureless absorbers (metallic iron against amorphous carbon by default).

The solve (:func:`~diskexplorer.fitting.composition.solve_composition`) and the comparison
(:func:`~diskexplorer.fitting.composition.compare_alternatives`) run in the background
through the deck's :class:`~diskexplorer.app.state.jobs.JobRunner`, against the data of the
moment with the comparison's weights; the result is only shown until the user accepts it,
as refinement does, and accepting changes the ring through ``ExplorerState.update_ring``.
"""
from __future__ import annotations

import html
import threading

import ipywidgets as w

from ..palette import ACCENT, INK, MUTED, OKABE_ITO
from ..pages.job_buttons import JobButtons, comparison_to_judge
from ..state.jobs import Throttle
from .model_panels import guarded

__all__ = ["CompositionPanel", "DEFAULT_SWAP"]

#: The named comparison the section offers first: the featureless absorber of the hot
#: inner disk, metallic iron against amorphous carbon.
DEFAULT_SWAP = "iron:amorphous_carbon"

# The card's column is narrow: tables scroll sideways rather than lose columns.
_TABLE_CSS = ("<style>.dx-composition-table td, .dx-composition-table th {padding: 1px 4px; text-align: right;"
              " white-space: nowrap} .dx-composition-table td:first-child {text-align: left; white-space: normal}"
              " .dx-composition-scroll {overflow-x: auto; max-width: 100%}</style>")


def _species():
    from ...dust import list_species

    return [s["name"] for s in list_species()]


class CompositionPanel(w.VBox):
    """Solve, accept and compare the composition of one ring (the card's ``index``).

    Parameters
    ----------
    card : RingCard
        The card it sits in (its ``index`` is the ring's, its ``deck`` the state, the data
        and the job runner).

    Attributes
    ----------
    result : CompositionResult or None
        The solve waiting for accept or discard.
    alternatives : AlternativesResult or None
        The last comparison of alternatives.
    drop : DropOneResult or None
        The last drop-one test.
    """

    def __init__(self, card):
        self.card = card
        deck = card.deck
        self.state = deck.state
        self.runner = deck.runner
        self.result = None
        self.alternatives = None
        self.drop = None
        self._throttle = Throttle(0.2)
        ring = self.state.scene.rings[card.index]
        species = _species()
        current = [k if isinstance(k, str) else k[0] for k, _ in getattr(ring.dust, "fractions", ())]
        self.components = w.SelectMultiple(options=species, value=tuple(s for s in current if s in species),
                                           rows=6, description="candidates", style={"description_width": "80px"},
                                           layout={"width": "300px"})
        self.sigma_in = w.Checkbox(value=False, description="also Σ_in (band strength)", indent=False)
        self.job_buttons = JobButtons(self.state, "solve composition", self.start_solve, self.cancel,
                                      start_width="150px", progress_class="dx-composition-progress")
        self.solve_button = self.job_buttons.start_button
        self.cancel_button = self.job_buttons.cancel_button
        self.progress = self.job_buttons.progress
        self.result_html = w.HTML()
        self.result_html.add_class("dx-composition-result")
        self.accept_button = w.Button(description="accept into the model", button_style="success",
                                      layout={"width": "180px"})
        self.discard_button = w.Button(description="discard", layout={"width": "80px"})
        self.accept_button.on_click(lambda b: self.accept())
        self.discard_button.on_click(lambda b: self.discard())
        self.result_actions = w.HBox([self.accept_button, self.discard_button], layout={"display": "none"})
        self.swap = w.Text(value=DEFAULT_SWAP, description="compare", style={"description_width": "60px"},
                           layout={"width": "220px"}, placeholder="species:species")
        self.compare_button = w.Button(description="compare", layout={"width": "80px"})
        self.then_compare = w.Checkbox(value=True, indent=False, description="compare after each solve",
                                       layout={"width": "auto"})
        self.compare_button.on_click(lambda b: self.start_compare())
        self.compare_html = w.HTML()
        self.compare_html.add_class("dx-composition-alternatives")
        self.drop_button = w.Button(description="drop-one test", layout={"width": "120px"})
        self.drop_button.on_click(lambda b: self.start_drop_one())
        self.drop_html = w.HTML()
        self.drop_html.add_class("dx-composition-drop-one")
        note = w.HTML(f"<span style='color:{MUTED};font-size:11px'>against the data shown, with their weights; "
                      "everything but the fractions (and Σ_in) held</span>")
        super().__init__([self.components, self.sigma_in,
                          w.HBox([self.solve_button, self.cancel_button], layout={"align_items": "center"}),
                          self.progress,
                          note, self.result_html, self.result_actions,
                          w.HBox([self.swap, self.compare_button], layout={"align_items": "center",
                                                                          "flex_flow": "row wrap"}),
                          w.HBox([self.then_compare, self.drop_button], layout={"align_items": "center",
                                                                               "flex_flow": "row wrap"}),
                          self.compare_html, self.drop_html])
        self.add_class("dx-composition")

    def sync(self, ring):
        """The ring changed: offer its species as candidates when none is chosen."""
        if not self.components.value:
            names = [k if isinstance(k, str) else k[0] for k, _ in getattr(ring.dust, "fractions", ())]
            self.components.value = tuple(n for n in names if n in self.components.options)

    # ------------------------------------------------------------------ helpers
    def _comparison(self, what):
        return comparison_to_judge(self.state, self.card.deck.comparison(), f"load data to {what} against")

    def _chosen(self):
        chosen = list(self.components.value)
        if not chosen:
            self.state.show_message(f"ring {self.state.scene.rings[self.card.index].name}: choose at least one "
                                    "candidate species to solve its composition")
        return chosen

    def _progress(self):
        runner, throttle = self.runner, self._throttle

        def progress(i, chi2):
            if throttle.ready():
                runner.post(lambda: setattr(self.progress, "value", f"evaluation {i} · best χ² {chi2:,.6g}"))

        return progress

    # ------------------------------------------------------------------ the solve
    def start_solve(self, wait=False):
        """Solve the ring's composition from the live scene (in the background unless ``wait``).

        Returns
        -------
        bool
            Whether a solve was started.
        """
        from ...fitting.composition import solve_composition

        if self.runner.busy:
            self.state.show_message("another job is running; wait for it or cancel it")
            return False
        comparison = self._comparison("solve the composition")
        chosen = self._chosen()
        if comparison is None or not chosen:
            return False
        scene, index, free = self.state.scene, self.card.index, bool(self.sigma_in.value)
        self.discard(quiet=True)
        self.job_buttons.started("starting …")
        runner = self.runner
        progress = self._progress()
        return runner.run(lambda: solve_composition(scene, comparison, index, chosen, sigma_in=free,
                                                    progress=progress, cancel=runner.cancelled),
                          self._finish, name="diskexplorer-composition", wait=wait)

    def solve_now(self):
        """Solve synchronously, whatever the runner (tests, scripts)."""
        return self.start_solve(wait=True)

    def cancel(self):
        """Stop a running solve or comparison (a solve offers its best state so far)."""
        self.runner.cancel()
        self.job_buttons.cancelling()

    def _finish(self, result, error):
        if not self.job_buttons.ended(error, "composition solve"):
            return
        self.result = result
        self.progress.value = f"done: {result.nfev} model evaluations"
        self.result_html.value = result_table(result)
        self.result_actions.layout.display = None
        thread = self.runner.thread
        if self.then_compare.value and self.swap.value.strip() and thread is not threading.current_thread():
            # One press answers both questions (which mixture; iron or carbon). The solve's
            # thread has posted this call as its last act: let it end before the next job.
            # (Without a widgets' loop the call runs in that thread; then the button waits.)
            if thread is not None:
                thread.join(timeout=5.0)
            self.start_compare()

    def accept(self):
        """Put the solved mixture (and Σ_in) into the ring; anything else stays as it is now.

        Returns
        -------
        bool
        """
        res = self.result
        if res is None:
            return False
        changes = res.ring_changes(0)
        if res.rings[0].sigma_in_error is None:
            changes.pop("sigma_in")
        index = self.card.index
        if not guarded(self.state, lambda: self.state.update_ring(index, **changes)):
            return False
        self.state.show_message(f"composition of ring {res.rings[0].name} accepted: χ² {res.chi2_before:,.6g} → "
                                f"{res.chi2_after:,.6g}")
        self.discard(quiet=True)
        return True

    def discard(self, quiet=False):
        """Drop the solve's result; the model stays as it is."""
        had = self.result is not None
        self.result = None
        self.result_html.value = ""
        self.result_actions.layout.display = "none"
        if had and not quiet:
            self.progress.value = "result discarded"

    # ------------------------------------------------------------------ alternatives
    def start_compare(self, wait=False):
        """Compare the ring with the first species of :attr:`swap` and with the second in its place.

        The candidates are the chosen ones (the first species of the pair joins them if
        neither is chosen). Returns whether the comparison was started.
        """
        from ...errors import DiskExplorerError
        from ...fitting.composition import compare_alternatives, swap_alternatives

        if self.runner.busy:
            self.state.show_message("another job is running; wait for it or cancel it")
            return False
        comparison = self._comparison("compare alternatives")
        chosen = self._chosen()
        if comparison is None or not chosen:
            return False
        text = self.swap.value.strip()
        pair = [s.strip() for s in text.split(":")]
        if len(pair) == 2 and pair[0] not in chosen and pair[1] not in chosen:
            chosen = chosen + [pair[0]]
        try:
            alternatives = swap_alternatives(chosen, text)
        except DiskExplorerError as exc:
            self.state.show_message(str(exc))
            return False
        scene, index = self.state.scene, self.card.index
        self.job_buttons.started("comparing …")
        runner = self.runner

        def progress(done, total):
            runner.post(lambda: setattr(self.progress, "value", f"alternative {done} of {total} solved"))

        return runner.run(lambda: compare_alternatives(scene, comparison, index, alternatives, progress=progress,
                                                       cancel=runner.cancelled),
                          self._compared, name="diskexplorer-alternatives", wait=wait)

    def compare_now(self):
        """Compare synchronously, whatever the runner (tests, scripts)."""
        return self.start_compare(wait=True)

    def _compared(self, result, error):
        if not self.job_buttons.ended(error, "comparison of alternatives"):
            return
        self.alternatives = result
        self.progress.value = f"compared: {result.best} preferred"
        self.compare_html.value = alternatives_table(result)

    # ------------------------------------------------------------------ drop-one
    def start_drop_one(self, wait=False):
        """Drop each chosen candidate in turn and re-solve the others (Δχ², ΔBIC).

        Returns whether the test was started.
        """
        from ...fitting.composition import drop_one

        if self.runner.busy:
            self.state.show_message("another job is running; wait for it or cancel it")
            return False
        comparison = self._comparison("test the components")
        chosen = self._chosen()
        if comparison is None or not chosen:
            return False
        if len(chosen) < 2:
            self.state.show_message("the drop-one test needs at least two candidate species")
            return False
        scene, index, free = self.state.scene, self.card.index, bool(self.sigma_in.value)
        self.job_buttons.started("drop-one test …")
        runner = self.runner

        def progress(done, total):
            runner.post(lambda: setattr(self.progress, "value", f"dropped {done} of {total}"))

        return runner.run(lambda: drop_one(scene, comparison, index, chosen, sigma_in=free, progress=progress,
                                           cancel=runner.cancelled),
                          self._dropped, name="diskexplorer-drop-one", wait=wait)

    def _dropped(self, result, error):
        if not self.job_buttons.ended(error, "drop-one test"):
            return
        self.drop = result
        self.progress.value = "drop-one test done"
        self.drop_html.value = drop_one_table(result)


def result_table(res):
    """HTML of a solve: χ² before → after, fractions before, after and ± 1σ."""
    ring = res.rings[0]
    rows = []
    for lab, b, f, e, z in zip(ring.labels, ring.before, ring.fractions, ring.errors, ring.at_zero):
        err = "at 0" if z else f"± {e:.2g}"
        rows.append(f"<tr><td>{html.escape(lab)}</td><td>{b:.3f}</td><td><b>{f:.4f}</b></td><td>{err}</td></tr>")
    if ring.sigma_in_error is not None:
        rows.append(f"<tr><td>Σ_in (g/cm²)</td><td>{ring.sigma_in_before:.4g}</td><td><b>{ring.sigma_in:.4g}</b></td>"
                    f"<td>± {ring.sigma_in_error:.2g}</td></tr>")
    colour = OKABE_ITO["bluish_green"] if res.chi2_after < res.chi2_before else MUTED
    return (f"{_TABLE_CSS}<div style='font-size:12px;color:{INK}'>χ² {res.chi2_before:,.6g} → "
            f"<b style='color:{colour}'>{res.chi2_after:,.6g}</b> "
            f"<span style='color:{MUTED}'>(N = {res.n_points}, k = {res.n_free})</span>"
            f"<div class='dx-composition-scroll'><table class='dx-composition-table' "
            f"style='border-collapse:collapse;margin-top:4px'>"
            f"<tr style='color:{ACCENT}'><th align=left>component</th><th>before</th><th>solved</th>"
            f"<th>1σ</th></tr>{''.join(rows)}</table></div>"
            f"<div style='color:{MUTED};font-size:11px'>1σ from (JᵀJ)⁻¹ on the simplex, not rescaled by χ²/N; "
            "the model is unchanged until you accept</div></div>")


def alternatives_table(res):
    """HTML of a comparison of alternatives: χ², reduced χ², k, ΔAIC, ΔBIC."""
    rows = []
    for r in res.rows:
        best = r["name"] == res.best
        name = f"<b>{html.escape(r['name'])}</b>" if best else html.escape(r["name"])
        rows.append(f"<tr><td>{name}</td><td>{r['chi2']:,.6g}</td><td>{r['reduced_chi2']:.4f}</td><td>{r['k']}</td>"
                    f"<td>{r['delta_aic']:.4g}</td><td>{r['delta_bic']:.4g}</td></tr>")
    return (f"{_TABLE_CSS}<div class='dx-composition-scroll'><table class='dx-composition-table' "
            f"style='border-collapse:collapse;font-size:11px;color:{INK}'><tr style='color:{ACCENT}'>"
            f"<th align=left>alternative</th><th>χ²</th><th>χ²/(N−k)</th>"
            f"<th>k</th><th>ΔAIC</th><th>ΔBIC</th></tr>{''.join(rows)}</table></div>"
            f"<div style='color:{MUTED};font-size:11px'>ΔAIC (Akaike 1974), ΔBIC (Schwarz 1978) against the lowest; "
            "&gt; 10 is strong evidence against; both assume independent Gaussian errors</div>")


def drop_one_table(res):
    """HTML of a drop-one test: per component its fraction, χ² without it, Δχ² and ΔBIC."""
    rows = []
    for r, f in zip(res.rows, res.full.rings[0].fractions):
        rows.append(f"<tr><td>{html.escape(r['component'])}</td><td>{f:.4f}</td><td>{r['chi2']:,.6g}</td>"
                    f"<td>{r['delta_chi2']:.4g}</td><td>{r['delta_bic']:.4g}</td></tr>")
    return (f"{_TABLE_CSS}<div class='dx-composition-scroll'><table class='dx-composition-table' "
            f"style='border-collapse:collapse;font-size:11px;color:{INK}'><tr style='color:{ACCENT}'>"
            f"<th align=left>dropped</th><th>fraction</th>"
            f"<th>χ² without</th><th>Δχ²</th><th>ΔBIC</th></tr>{''.join(rows)}</table></div>"
            f"<div style='color:{MUTED};font-size:11px'>χ² with every component {res.full.chi2_after:,.6g}; "
            "ΔBIC &gt; 0: the data need it (&gt; 10: strongly), for independent Gaussian errors</div>")
