"""Colours of the explorer, from published colour-blind-safe palettes.

Component and pin colours are the eight-colour palette of Okabe & Ito (2008, "Color
Universal Design", https://jfly.uni-koeln.de/color/), chosen because every pair stays
distinguishable under the common colour-vision deficiencies. Wavelength and image
colour scales are sequences from Paul Tol's schemes (Tol 2021, SRON/EPS/TN/09-002):
the "discrete rainbow" subset for wavelength (ordered, no pale colours that vanish on
white) and "YlOrBr" for brightness (monotonic lightness).
"""
from __future__ import annotations

__all__ = ["OKABE_ITO", "COMPONENT_COLOURS", "RING_COLOURS", "PIN_COLOURS", "WAVELENGTH_SCHEME",
           "BRIGHTNESS_SCHEME", "DELTA_CHI2_SCHEME", "ring_colour", "INK", "MUTED", "PAPER", "ACCENT"]

#: Okabe & Ito (2008) palette by the names the authors gave.
OKABE_ITO = {
    "black": "#000000", "orange": "#E69F00", "sky_blue": "#56B4E9", "bluish_green": "#009E73",
    "yellow": "#F0E442", "blue": "#0072B2", "vermillion": "#D55E00", "reddish_purple": "#CC79A7",
}

#: Fixed roles in the SED and spectrum figures.
COMPONENT_COLOURS = {"star": OKABE_ITO["orange"], "extended": "#999999", "total": OKABE_ITO["black"],
                     "data": OKABE_ITO["vermillion"]}

#: Rings cycle through the remaining Okabe–Ito colours.
RING_COLOURS = (OKABE_ITO["blue"], OKABE_ITO["bluish_green"], OKABE_ITO["reddish_purple"],
                OKABE_ITO["sky_blue"], OKABE_ITO["vermillion"], OKABE_ITO["yellow"])

#: Pinned states: drawn faint and dashed, so these need not avoid the ring colours.
PIN_COLOURS = (OKABE_ITO["reddish_purple"], OKABE_ITO["bluish_green"], OKABE_ITO["sky_blue"],
               OKABE_ITO["orange"])

#: Paul Tol's discrete rainbow, a dark-to-warm subset (colours 3, 10, 15, 18, 23, 26).
WAVELENGTH_SCHEME = ("#882E72", "#1965B0", "#4EB265", "#CAE0AB", "#F6C141", "#DC050C")

#: Paul Tol's YlOrBr sequential scheme (light = faint, dark = bright would hide the
#: rings on a white page, so the image uses it reversed: faint is pale).
BRIGHTNESS_SCHEME = ("#FFFFE5", "#FFF7BC", "#FEE391", "#FEC44F", "#FB9A29", "#EC7014", "#CC4C02",
                     "#993404", "#662506")

#: Δχ² maps: the same YlOrBr sequence, dark at the minimum, so the best-fitting valley is
#: the darkest, most salient region and poor fits fade towards the page colour.
DELTA_CHI2_SCHEME = tuple(reversed(BRIGHTNESS_SCHEME))

#: Interface colours (neutral greys plus one accent from the same palette).
INK = "#1d2430"
MUTED = "#6b7280"
PAPER = "#fbfaf7"
ACCENT = OKABE_ITO["blue"]
#: Text that warns (reader warnings, points left out of χ²): a dark orange that reads on paper.
WARNING = "#9a5b00"


def ring_colour(index):
    """Colour of ring ``index`` (0-based), cycling through :data:`RING_COLOURS`."""
    return RING_COLOURS[index % len(RING_COLOURS)]
