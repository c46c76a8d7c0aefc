"""Evaluate a model against its data and write a static report (tables, model cube, figures).

This is the headless logic behind ``diskexplorer evaluate``; every step is usable from
Python on its own::

    from diskexplorer.report import evaluate
    report = evaluate("start.json", out="report", formats=("png", "pdf"))
    print(report.chi2_text())

What an evaluation writes into its output folder:

* ``chi2.csv`` — χ² per data kind and per instrument (and the weighted total);
* ``residuals_<kind>.csv`` — one row per data point of each kind present (``vis2``,
  ``t3phi``, ``t3amp``, ``visamp``, ``photometry``, ``spectrum``, ``flux``) with the
  wavelength in µm, the spatial frequency in Mλ (interferometric kinds), data, error,
  model and normalised residual (data − model)/error;
* ``model.nc`` — a netCDF file (xarray) with the model image cube over a few
  wavelengths (x, y in mas), the SED and its components on a fine grid, and the model
  next to the data for every data kind;
* figures (PNG and/or PDF): ``sed``, ``silicate_band``, ``vis2``, ``closure_phase``,
  ``image``, ``profiles``.

Nothing is overwritten unless asked: the whole list of outputs is checked before any
computation starts. matplotlib is imported only when figures are drawn, with the
non-interactive Agg backend, so the package works on machines without a display and
pulls in no widget library.

Modules, by what they hold: ``inputs`` (starting point, data files), ``outputs`` (figure
names and formats, the output plan), ``tables`` (χ² and residual tables, CSV),
``cube`` (the netCDF model cube), ``figures`` (matplotlib), ``evaluation`` (the whole run).
"""

from __future__ import annotations

from .cube import model_cube, write_model_cube
from .evaluation import EvaluationReport, evaluate
from .figures import write_figures
from .inputs import classify_data_file, data_description_with, load_start
from .outputs import DEFAULT_DPI, DEFAULT_IMAGE_WAVELENGTHS, FIGURE_SIZES_IN, FIGURES, FORMATS, planned_outputs
from .tables import chi2_breakdown, format_chi2_table, residual_tables, write_residual_tables

__all__ = [
    "EvaluationReport", "evaluate", "load_start", "classify_data_file", "data_description_with",
    "planned_outputs", "chi2_breakdown", "format_chi2_table", "residual_tables", "write_residual_tables",
    "model_cube", "write_model_cube", "write_figures", "FIGURES", "FIGURE_SIZES_IN", "DEFAULT_DPI",
    "DEFAULT_IMAGE_WAVELENGTHS", "FORMATS",
]
