"""bqplot figures of the explorer; each has update_data / update_model / update_pins / apply_style."""
from .chi2_table import Chi2Table
from .interferometry import (ClosureFigure, CorrelatedFluxFigure, CorrFluxPointsFigure, DiffPhaseFigure,
                             VisAmpFigure, Vis2Figure)
from .sed import SedFigure, SpectrumFigure
from .structure import ImageFigure, ProfilesFigure

__all__ = ["SedFigure", "SpectrumFigure", "Vis2Figure", "ClosureFigure", "VisAmpFigure", "CorrFluxPointsFigure",
           "DiffPhaseFigure", "CorrelatedFluxFigure", "ProfilesFigure", "ImageFigure", "Chi2Table"]
