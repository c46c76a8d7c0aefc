"""A slider companion that also keeps the control's tooltip on the exact value, in the page.

:class:`SliderCompanion` is a :class:`~diskexplorer.app.controls.slider_aria.SliderAria` whose front
end, after every move, also writes the title of the control's label (``.dx-param-label``):
"T_in = 1490 K — temperature at r_in". The kernel then need not rewrite the label's HTML on
every slider step (one message fewer per step); it writes the title itself only when the
value leaves the slider's grid (typed, set from code), and the page overwrites it with the
same value computed from the slider.
"""
from __future__ import annotations

import anywidget
import traitlets as t

from .slider_aria import _ESM, SliderAria

__all__ = ["SliderCompanion"]

# Inserted into SliderAria's apply(), after the handle's attributes are written; `v` is the
# value in the unit, `box` the control.
_ANCHOR = "if (observer) observer.takeRecords();"
_TITLE = """
      const tip = box.querySelector(".dx-param-label");
      const name = model.get("title_name");
      if (tip && name) {
        const symbol = model.get("title_unit");
        const exact = name + " = " + String(Number(v.toPrecision(12))) + (symbol ? " " + symbol : "")
          + " — " + model.get("title_description");
        if (tip.getAttribute("title") !== exact) tip.setAttribute("title", exact);
      }
      """
if _ANCHOR not in _ESM:  # pragma: no cover - guards against a change of SliderAria's script
    raise ImportError("slider_title: SliderAria's script changed; the title hook no longer fits")


class SliderCompanion(SliderAria):
    """SliderAria plus the label's title with the exact value.

    Attributes
    ----------
    title_name : str
        The parameter's label as the title shows it ("T_in"); "" writes no title.
    title_unit : str
        The unit's symbol ("K", "°"; "" for none).
    title_description : str
        What the parameter means.
    """

    _esm = _ESM.replace(_ANCHOR, _TITLE + _ANCHOR)
    title_name = t.Unicode("").tag(sync=True)
    title_unit = t.Unicode("").tag(sync=True)
    title_description = t.Unicode("").tag(sync=True)

    def __init__(self, layout=None, **kw):
        # SliderAria fixes its own hidden layout; this one takes a shared one.
        anywidget.AnyWidget.__init__(self, layout=layout if layout is not None else {"display": "none"}, **kw)
