"""What a slider's handle tells assistive technology: its name and its value in the unit.

ipywidgets draws sliders with noUiSlider, whose handle (``role="slider"``) reports the
slider's own coordinate: ``aria-valuenow`` rounded to one decimal and ``aria-valuetext``
unformatted. For a log slider that coordinate is log10 of the value (r_in = 0.34 au is
announced as "-0.5"), and no handle has an accessible name. ipywidgets offers no option
for either, so each :class:`~diskexplorer.app.controls.param_control.ParamControl` carries one invisible
:class:`SliderAria` whose front end rewrites its handle's ARIA attributes after every
move: ``aria-label`` from the parameter's label and description, ``aria-valuenow`` /
``aria-valuemin`` / ``aria-valuemax`` as values in the parameter's unit, and
``aria-valuetext`` such as "0.34 au".

The same front end keeps the control's keys (arrows, Page Up/Down, Home, End) for the
control in every front end: a notebook's shortcuts never see them (see ``installKeyGuard``).
"""
from __future__ import annotations

import anywidget
import traitlets as t

__all__ = ["SliderAria"]

_ESM = r"""
// The keys a slider handle or a number box answers. A notebook front end binds some of
// them as shortcuts (Notebook 7 in command mode: ArrowRight moves to the heading below) and
// takes the key before the control sees it.
const CONTROL_KEYS = new Set(["ArrowLeft", "ArrowRight", "ArrowUp", "ArrowDown", "PageUp", "PageDown",
                              "Home", "End"]);

function controlKey(e) {
  return CONTROL_KEYS.has(e.key) && !e.ctrlKey && !e.metaKey && !e.altKey;
}

// Lumino (JupyterLab, Notebook 7) matches a shortcut by walking from the key's target up
// to the document and stops at an element marked data-lm-suppress-shortcuts. Notebook 7
// listens on the document in the capture phase, before any handler of ours below it, so
// one listener on the window (whose capture phase comes first) marks the key's target in a
// control for the time of that one key press. Once per page.
function installKeyGuard() {
  if (window.__dxKeyGuard) return;
  window.__dxKeyGuard = true;
  window.addEventListener("keydown", (e) => {
    if (!controlKey(e)) return;
    const target = e.target;
    if (!(target && target.closest && target.closest(".dx-param"))) return;
    // On the target itself: a binding's selector such as "... :focus" matches the focused
    // handle before the walk reaches any box around it.
    if (target.hasAttribute("data-lm-suppress-shortcuts")) return;
    target.setAttribute("data-lm-suppress-shortcuts", "true");
    // After the whole dispatch (a microtask would run between two listeners).
    setTimeout(() => target.removeAttribute("data-lm-suppress-shortcuts"), 0);
  }, true);
}

// After the control has handled the key, nothing above it hears it (a front end listening
// in the bubble phase, as JupyterLab does, or any page script).
function guardBox(box) {
  if (box.dataset.dxKeys) return;
  box.dataset.dxKeys = "1";
  box.addEventListener("keydown", (e) => { if (controlKey(e)) e.stopPropagation(); });
}

function shown(x, digits) {
  return String(Number(Number(x).toPrecision(digits)));
}

export default {
  render({ model, el }) {
    let box = null, slider = null, observer = null, timer = null, tries = 0;

    // The slider's coordinate -> the parameter's value (ends map to the range's ends,
    // which may lie inside the last step: see ParamControl).
    function value(raw) {
      const lo = model.get("min_coord"), hi = model.get("max_coord");
      const tol = 1e-9 * Math.max(1, Math.abs(lo), Math.abs(hi));
      if (raw <= lo + tol && model.get("min_value") !== null) return model.get("min_value");
      if (raw >= hi - tol && model.get("max_value") !== null) return model.get("max_value");
      return model.get("log") ? Math.pow(10, raw) : raw;
    }

    function apply() {
      const handle = box && box.querySelector(".noUi-handle");
      if (!handle) return;
      const raw = slider && slider.noUiSlider ? Number(slider.noUiSlider.get()) : NaN;
      if (!Number.isFinite(raw)) return;
      const digits = model.get("digits"), unit = model.get("unit");
      const v = value(raw);
      const text = shown(v, digits) + (unit ? " " + unit : "");
      const lo = value(model.get("min_coord")), hi = value(model.get("max_coord"));
      const attrs = {
        "aria-label": model.get("label"),
        "aria-valuenow": String(Number(v.toPrecision(12))),
        "aria-valuemin": String(Number(lo.toPrecision(12))),
        "aria-valuemax": String(Number(hi.toPrecision(12))),
        "aria-valuetext": text,
      };
      for (const [k, a] of Object.entries(attrs)) {
        if (handle.getAttribute(k) !== a) handle.setAttribute(k, a);
      }
      if (observer) observer.takeRecords();  // our own writes need no answer
    }

    function attach() {
      box = el.closest(".dx-param");
      slider = box && box.querySelector(".noUi-target");
      if (!slider) {
        // The control's other views may not be in the page yet.
        if (tries++ < 400) timer = setTimeout(attach, 50);
        return;
      }
      guardBox(box);
      observer = new MutationObserver(apply);
      observer.observe(box, { subtree: true, childList: true, attributes: true,
                              attributeFilter: ["aria-valuenow", "aria-valuetext"] });
      apply();
    }

    model.on("change", apply);
    installKeyGuard();
    attach();
    return () => {
      clearTimeout(timer);
      if (observer) observer.disconnect();
      model.off("change", apply);
    };
  },
};
"""


class SliderAria(anywidget.AnyWidget):
    """Invisible companion of a slider: its handle's ARIA name and value in the unit.

    Place it in the same ``.dx-param`` box as the slider. Coordinates are the slider's:
    the value for a linear slider, log10 of the value for a log slider.

    Attributes
    ----------
    label : str
        Accessible name of the handle (parameter label, unit and description).
    unit : str
        Unit appended to the value text ("" for none).
    log : bool
        Whether the slider's coordinate is log10 of the value.
    digits : int
        Significant digits of the value text.
    min_coord, max_coord : float
        The slider's range in its coordinate.
    min_value, max_value : float or None
        Values the range's ends stand for when they differ from the coordinate's value
        (an end one partial step beyond the grid); None otherwise.
    """

    _esm = _ESM
    label = t.Unicode("").tag(sync=True)
    unit = t.Unicode("").tag(sync=True)
    log = t.Bool(False).tag(sync=True)
    digits = t.Int(4).tag(sync=True)
    min_coord = t.Float(0.0).tag(sync=True)
    max_coord = t.Float(1.0).tag(sync=True)
    min_value = t.Float(None, allow_none=True).tag(sync=True)
    max_value = t.Float(None, allow_none=True).tag(sync=True)

    def __init__(self, **kw):
        super().__init__(layout={"display": "none"}, **kw)
