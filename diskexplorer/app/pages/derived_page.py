"""Derived quantities of the live model: sublimation radius, scales, periods, dust masses,
optical depths and the planet masses that the gaps between rings would imply.

The numbers come from :mod:`diskexplorer.physics.derived`; this panel only chooses what to
show and formats it. Its assumptions (sublimation temperature, Q_R, h/r, α) are state
traits, so a session keeps them and a change refreshes only this panel.
"""
from __future__ import annotations

import html
import math

import ipywidgets as w

from ...errors import DiskExplorerError
from ...physics import derived as dq
from ..palette import ACCENT, INK, MUTED, OKABE_ITO, ring_colour

__all__ = ["DerivedPage", "derived_rows", "GAP_NOTE"]

#: What the gap relation is and where it holds; shown under the gap table.
GAP_NOTE = ("Planet masses use the gap-width relation of Kanagawa et al. (2016, PASJ 68, 43): "
            "Δ_gap/R_p = 0.41 q^½ (h/r)^−¾ α^−¼, from 2-D viscous hydrodynamics of one planet on a fixed "
            "circular orbit, calibrated roughly for 10⁻⁴ ≲ q ≲ 10⁻², 0.03 ≲ h/r ≲ 0.1 and 10⁻⁴ ≲ α ≲ 10⁻² "
            "(range and coefficient from memory: check the paper before quoting). It describes gas gaps; "
            "the empty space between two model rings traces dust, which pressure traps make wider, so these "
            "masses are upper estimates of an interpretation, not measurements. The planet is placed at the "
            "gap's centre.")

_TABLE = f"border-collapse:collapse;font-size:12px;color:{INK};margin:2px 0 6px 0"
_TH = f"style='text-align:right;color:{ACCENT};padding:1px 8px;font-weight:600'"
_TD = "style='text-align:right;padding:1px 8px'"


def _g(x, digits=3):
    if x is None:
        return "–"
    if isinstance(x, float) and math.isinf(x):
        return "∞ (opaque)"
    if not math.isfinite(x):
        return "–"
    return f"{x:.{digits}g}"


def derived_rows(scene, t_sub=1500.0, q_r=1.0, aspect_ratio=0.05, alpha=1e-3):
    """The numbers the panel shows, as plain data.

    Parameters
    ----------
    scene : Scene
    t_sub : float
        Sublimation temperature, K.
    q_r : float
        Q_abs(T★)/Q_abs(T_sub).
    aspect_ratio, alpha : float
        h/r and α assumed at every gap.

    Returns
    -------
    dict
        ``star``: luminosity (L☉), ``r_sub`` (au), ``r_sub_mas`` (mas), ``rim_ratio``
        (r_in of the innermost enabled ring / R_sub) — or None without a star;
        ``scale``: ``au_per_mas``, ``mas_per_au``; ``rings``: one dict per ring (radii in au
        and mas, periods in yr, ``dust_mass`` in M⊕, ``tau_in``/``tau_out`` at 10 µm along
        the line of sight); ``gaps``: :class:`~diskexplorer.physics.derived.Gap` list;
        ``species``: :func:`~diskexplorer.physics.derived.species_sublimation_radii` (each
        species' optically thin sublimation radius and Q_R for the current star).

    Raises
    ------
    ParameterError
        Non-positive assumptions.
    """
    d = scene.distance
    star = scene.star
    out = {"scale": {"au_per_mas": dq.angular_to_physical(1.0, d), "mas_per_au": dq.physical_to_angular(1.0, d)},
           "star": None, "rings": [], "gaps": []}
    enabled = [r for r in scene.rings if r.enabled]
    if star is not None:
        lum = float(star.luminosity)
        r_sub = dq.sublimation_radius(lum, t_sub=t_sub, q_r=q_r)
        inner = min((r.r_in for r in enabled), default=None)
        out["star"] = {"luminosity": lum, "r_sub": r_sub, "r_sub_mas": dq.physical_to_angular(r_sub, d),
                       "rim_ratio": None if inner is None else inner / r_sub, "mass": star.mass}
    for k, ring in enumerate(scene.rings):
        row = {"index": k, "name": ring.name, "enabled": ring.enabled, "r_in": ring.r_in, "r_out": ring.r_out,
               "r_in_mas": dq.physical_to_angular(ring.r_in, d), "r_out_mas": dq.physical_to_angular(ring.r_out, d),
               "dust_mass": dq.dust_mass(ring), "period_in": None, "period_out": None}
        if star is not None:
            row["period_in"] = dq.keplerian_period(ring.r_in, star.mass)
            row["period_out"] = dq.keplerian_period(ring.r_out, star.mass)
        try:
            tau_in, tau_out = dq.optical_depth_at(ring, 10.0, scene.inclination)
        except DiskExplorerError:
            tau_in = tau_out = float("nan")
        row["tau_in"], row["tau_out"] = float(tau_in), float(tau_out)
        out["rings"].append(row)
    if star is not None:
        out["gaps"] = dq.gaps_of(scene, aspect_ratio=aspect_ratio, alpha=alpha)
    try:
        out["species"] = dq.species_sublimation_radii(scene)
    except DiskExplorerError as exc:  # a species whose κ cannot form a Planck mean: say so
        out["species"] = []
        out["species_error"] = str(exc)
    return out


class DerivedPage(w.VBox):
    """Inputs for the assumptions and one HTML table of derived quantities.

    Parameters
    ----------
    state : ExplorerState
        The inputs write ``t_sub``, ``q_r``, ``gap_aspect_ratio`` and ``gap_alpha``.
    visible : callable, optional
        Whether the panel is on screen; while it is not, refreshes are deferred.

    Attributes
    ----------
    table : ipywidgets.HTML
        The rendered quantities.
    numbers : dict or None
        The last :func:`derived_rows` result.
    """

    def __init__(self, state, visible=None):
        self.state = state
        self._visible = visible or (lambda: True)
        self._stale = True
        self.numbers = None
        style = {"description_width": "initial"}
        self.inputs = {
            "t_sub": w.BoundedFloatText(value=state.t_sub, min=500.0, max=3000.0, step=50.0,
                                        description="T_sub [K]", style=style, layout={"width": "150px"},
                                        tooltip="dust sublimation temperature"),
            "q_r": w.BoundedFloatText(value=state.q_r, min=0.01, max=100.0, step=0.1, description="Q_R",
                                      style=style, layout={"width": "120px"},
                                      tooltip="Q_abs(T★)/Q_abs(T_sub) = 1/cooling efficiency"),
            "gap_aspect_ratio": w.BoundedFloatText(value=state.gap_aspect_ratio, min=0.005, max=0.5, step=0.005,
                                                   description="h/r", style=style, layout={"width": "120px"},
                                                   tooltip="disk aspect ratio at the gaps"),
            "gap_alpha": w.BoundedFloatText(value=state.gap_alpha, min=1e-6, max=0.5, step=1e-4,
                                            description="α", style=style, layout={"width": "130px"},
                                            tooltip="viscosity parameter at the gaps"),
        }
        for name, box in self.inputs.items():
            w.link((box, "value"), (state, name))
            box.add_class(f"dx-derived-{name}")
        self.table = w.HTML(layout={"width": "100%"})
        self.table.add_class("dx-derived-table")
        super().__init__([
            w.HTML("<div class='dx-section-title'>assumptions</div>"),
            w.HBox([self.inputs["t_sub"], self.inputs["q_r"],
                    w.HTML(f"<span style='color:{MUTED};font-size:11px;margin:0 12px'>inner rim</span>"),
                    self.inputs["gap_aspect_ratio"], self.inputs["gap_alpha"],
                    w.HTML(f"<span style='color:{MUTED};font-size:11px;margin:0 12px'>gaps</span>")],
                   layout={"align_items": "center"}),
            self.table])
        self.add_class("dx-derived-panel")

    def refresh(self):
        """Recompute and redraw (deferred while hidden)."""
        if not self._visible():
            self._stale = True
            return
        self._stale = False
        st = self.state
        try:
            self.numbers = derived_rows(st.scene, st.t_sub, st.q_r, st.gap_aspect_ratio, st.gap_alpha)
        except DiskExplorerError as exc:
            self.numbers = None
            self.table.value = f"<div style='color:{OKABE_ITO['vermillion']}'>{html.escape(str(exc))}</div>"
            return
        value = self.render(self.numbers)
        if self.table.value != value:
            self.table.value = value

    def on_shown(self):
        """The panel came on screen: catch up if the model changed meanwhile."""
        if self._stale:
            self.refresh()

    def _render_species(self, n):
        """Table of each species' sublimation radius (optically thin equilibrium)."""
        head = "<div class='dx-section-title'>sublimation radius per species</div>"
        if n.get("species_error"):
            return head + f"<div style='color:{OKABE_ITO['vermillion']};font-size:12px'>{html.escape(n['species_error'])}</div>"
        if not n.get("species"):
            return head + f"<div style='color:{MUTED};font-size:12px'>no star, or no enabled ring</div>"
        d = self.state.scene.distance
        body = "".join(
            f"<tr><td style='text-align:left;padding:1px 8px'><span style='color:{ring_colour(r['ring'])}'>■</span> "
            f"{html.escape(r['ring_name'])}</td><td style='text-align:left;padding:1px 8px'>{html.escape(r['species'])}</td>"
            f"<td {_TD}>{_g(r['t_sub'], 4)}</td><td {_TD}>{_g(r['q_r'])}</td>"
            f"<td {_TD}><b>{_g(r['r_sub'], 4)}</b></td><td {_TD}>{_g(dq.physical_to_angular(r['r_sub'], d), 4)}</td></tr>"
            for r in n["species"])
        cols = ("ring", "species", "T_sub [K]", "Q_R = κ★/κ_P(T_sub)", "R_sub [au]", "[mas]")
        return (head + f"<table class='dx-derived-species' style='{_TABLE}'><tr>"
                + "".join(f"<th {_TH}>{h}</th>" for h in cols) + "</tr>" + body + "</table>"
                + f"<div style='font-size:11px;color:{MUTED}'>optically thin grains in the star's direct light: "
                  "σT⁴κ_P(T) = L★κ★/(16πr²); a thick inner rim would shadow grains behind it</div>")

    def render(self, n):
        """HTML of :func:`derived_rows` output."""
        st = self.state
        parts = []
        sc = n["scale"]
        star = n["star"]
        parts.append("<div class='dx-section-title'>star and scales</div>")
        rows = [("distance", f"{_g(st.scene.distance, 4)} pc"),
                ("1 mas", f"{_g(sc['au_per_mas'], 4)} au"), ("1 au", f"{_g(sc['mas_per_au'], 4)} mas")]
        if star is not None:
            rows.insert(0, ("L★", f"{_g(star['luminosity'], 4)} L☉"))
            ratio = star["rim_ratio"]
            rim = "" if ratio is None else (
                f" — innermost ring starts at <b>{_g(ratio, 3)}</b> × R_sub"
                + ("" if 0.5 <= ratio <= 2.0 else
                   f" <span style='color:{OKABE_ITO['vermillion']}'>(far from the sublimation radius)</span>"))
            rows.append(("R_sub", f"<b class='dx-rsub'>{_g(star['r_sub'], 4)}</b> au = {_g(star['r_sub_mas'], 4)} mas "
                                  f"<span style='color:{MUTED}'>(T_sub {_g(st.t_sub, 4)} K, Q_R {_g(st.q_r, 3)}, "
                                  f"optically thin grains)</span>{rim}"))
        parts.append(f"<table style='{_TABLE}'>" + "".join(
            f"<tr><td style='color:{MUTED};padding:1px 8px'>{k}</td><td style='padding:1px 8px'>{v}</td></tr>"
            for k, v in rows) + "</table>")
        parts.append("<div class='dx-section-title'>rings</div>")
        head = ("ring", "r_in–r_out [au]", "[mas]", "P_orb at r_in / r_out [yr]", "dust mass [M⊕]",
                "τ(10 µm) at r_in / r_out")
        body = []
        for r in n["rings"]:
            name = html.escape(r["name"]) + ("" if r["enabled"] else f" <span style='color:{MUTED}'>(off)</span>")
            body.append(
                f"<tr><td style='text-align:left;padding:1px 8px'><span style='color:{ring_colour(r['index'])}'>■</span>"
                f" {name}</td><td {_TD}>{_g(r['r_in'])}–{_g(r['r_out'])}</td>"
                f"<td {_TD}>{_g(r['r_in_mas'])}–{_g(r['r_out_mas'])}</td>"
                f"<td {_TD}>{_g(r['period_in'])} / {_g(r['period_out'])}</td><td {_TD}>{_g(r['dust_mass'])}</td>"
                f"<td {_TD}>{_g(r['tau_in'])} / {_g(r['tau_out'])}</td></tr>")
        parts.append(f"<table class='dx-derived-rings' style='{_TABLE}'><tr>"
                     + "".join(f"<th {_TH}>{h}</th>" for h in head) + "</tr>" + "".join(body) + "</table>")
        parts.append(f"<div style='font-size:11px;color:{MUTED}'>τ along the line of sight (vertical τ / cos i, "
                     f"i = {_g(st.scene.inclination, 3)}°); dust masses from the model's Σ(r) whatever its opacity</div>")
        parts.append(self._render_species(n))
        parts.append("<div class='dx-section-title'>gaps read as planets</div>")
        if not n["gaps"]:
            parts.append(f"<div style='color:{MUTED};font-size:12px'>no gap between enabled rings</div>")
        else:
            head = ("between", "gap [au]", "width Δ [au]", "Δ/R_p", "q = M_p/M★", "M_p [M_J]", "")
            body = []
            for gp in n["gaps"]:
                flag = (f"<span style='color:{OKABE_ITO['vermillion']}' title='{html.escape(gp.validity)}'>"
                        "outside the calibrated range</span>" if gp.validity else
                        f"<span style='color:{OKABE_ITO['bluish_green']}'>inside the calibrated range</span>")
                body.append(f"<tr><td style='text-align:left;padding:1px 8px'>{html.escape(gp.inner_ring)} – "
                            f"{html.escape(gp.outer_ring)}</td><td {_TD}>{_g(gp.r_start)}–{_g(gp.r_end)}</td>"
                            f"<td {_TD}>{_g(gp.width)}</td><td {_TD}>{_g(gp.width_over_r)}</td>"
                            f"<td {_TD}>{_g(gp.mass_ratio)}</td><td {_TD}><b>{_g(gp.planet_mass)}</b></td>"
                            f"<td {_TD}>{flag}</td></tr>")
            parts.append(f"<table class='dx-derived-gaps' style='{_TABLE}'><tr>"
                         + "".join(f"<th {_TH}>{h}</th>" for h in head) + "</tr>" + "".join(body) + "</table>")
            notes = [gp.validity for gp in n["gaps"] if gp.validity]
            if notes:
                parts.append(f"<div style='font-size:11px;color:{OKABE_ITO['vermillion']}'>"
                             + "<br>".join(html.escape(x) for x in dict.fromkeys(notes)) + "</div>")
        parts.append(f"<div class='dx-gap-note' style='font-size:11px;color:{MUTED};max-width:760px;margin-top:4px'>"
                     f"{html.escape(GAP_NOTE)}</div>")
        return "".join(parts)
