"""The whole evaluation: read, compare, and write tables, the model cube and figures."""
from __future__ import annotations

import dataclasses
import os

from dataclasses import dataclass, field

from ..errors import DataError, DiskExplorerError
from .cube import model_cube, write_model_cube
from .figures import write_figures
from .inputs import data_description_with, load_start
from .outputs import DEFAULT_DPI, DEFAULT_IMAGE_WAVELENGTHS, FORMATS, MIN_NPIX, StagedOutput, _quiet, \
    _refuse_existing, check_image_wavelengths, check_output_folder, figure_formats, planned_outputs
from .tables import chi2_breakdown, format_chi2_table, residual_tables, write_csv, write_residual_tables

__all__ = ["EvaluationReport", "evaluate"]


@dataclass
class EvaluationReport:
    """What :func:`evaluate` computed and wrote.

    Attributes
    ----------
    scene : Scene
        The evaluated model.
    comparison : Comparison
        The data bound to the engine.
    result : ComparisonResult
        Model, residuals and χ² per data kind.
    chi2 : list of dict
        Rows of :func:`chi2_breakdown` (per kind, per instrument, total).
    files : list of pathlib.Path
        Everything written, in order.
    cube : xarray.Dataset or None
        The model cube (also in ``model.nc``).
    """

    scene: object
    comparison: object
    result: object
    chi2: list
    files: list = field(default_factory=list)
    cube: object = None

    def chi2_text(self) -> str:
        """The χ² table as aligned text, then the points left out of χ² and why."""
        notes = [f"not judged: {x}" for x in getattr(self.result, "left_out", ())]
        return "\n".join([format_chi2_table(self.chi2)] + notes)


def evaluate(source, out="evaluation", data=None, formats=("png",), force=False, progress=None, *,
             base_dir=None, image_wavelengths=DEFAULT_IMAGE_WAVELENGTHS, npix=256, dpi=DEFAULT_DPI,
             figures=True, cube=True, lenient=False, target=None):
    """Evaluate a model against its data and write tables, a model cube and figures.

    Parameters
    ----------
    source : str, os.PathLike, dict, StartingPoint or Scene
        A starting-point document (path, dict or read), or a bare :class:`Scene` (then
        ``data`` names the data).
    out : str or os.PathLike
        Output folder (created if needed). Everything is written into a hidden temporary
        folder beside it and moved into place only when complete; a failure leaves
        ``out`` as it was.
    data : sequence of paths, DataDescription or dict, optional
        With a starting point: data files (OIFITS, photometry, spectrum; classified by
        content) replacing the document's data of the same kind. With a bare scene: a
        data description (``{"oifits": [...], "photometry": ..., "spectrum": ...}``) or
        a list of files.
    formats : sequence of str or str
        Figure formats, ``"png"`` and/or ``"pdf"``.
    force : bool
        Overwrite existing outputs. Default False: if any planned output exists,
        nothing is computed or written.
    progress : callable, optional
        ``progress(message)`` for each step (the CLI prints them).
    base_dir : str, optional
        Folder relative data paths refer to (default: the document's folder, else the
        current directory).
    image_wavelengths : sequence of float
        Wavelengths of the image cube in µm (positive, distinct).
    npix : int
        Image pixels per side (at least 16).
    dpi : int
        Resolution of raster figures (dots per inch, > 0).
    figures, cube : bool
        Whether to draw figures and write the netCDF cube.
    lenient : bool
        Read what conforms in OIFITS files that do not conform to the standard (each
        defect a warning) instead of refusing them.
    target : str, optional
        The target to judge in every OIFITS file. Default: the one the data description
        names, else the science target, else the target with most points (said).

    Returns
    -------
    EvaluationReport

    Raises
    ------
    FileExistsError
        If an output exists and ``force`` is False.
    NotADirectoryError
        ``out`` (or a folder above it) is a file.
    SeedError, DataError, DiskExplorerError
        Bad documents, data files or arguments; arguments are checked before anything
        is read or written.
    FileNotFoundError
        A starting-point document that does not exist.

    Examples
    --------
    >>> report = evaluate("start.json", out="report", formats="png,pdf")   # doctest: +SKIP
    >>> print(report.chi2_text())                                           # doctest: +SKIP
    """
    from ..fitting.data_description import DataDescription, describe_data
    from ..observables.scene import Scene

    say = progress or _quiet
    fmts = figure_formats(formats) if figures else ()
    if figures and not fmts:
        raise DiskExplorerError("no figure format given; choose from " + ", ".join(FORMATS))
    lams = check_image_wavelengths(image_wavelengths)
    if isinstance(npix, bool) or not isinstance(npix, int) or npix < MIN_NPIX:
        raise DiskExplorerError(f"npix {npix!r}: expected a whole number of at least {MIN_NPIX} pixels per side")
    if not (isinstance(dpi, (int, float)) and dpi > 0):
        raise DiskExplorerError(f"dpi {dpi!r}: expected a positive number of dots per inch")
    check_output_folder(out)
    accuracy = 1
    if isinstance(source, Scene):
        scene = source
        if data is None or isinstance(data, (dict, DataDescription)):
            desc = describe_data(data)
        else:
            desc = data_description_with(None, data, say=say)
    else:
        say(f"reading the starting point {source if not isinstance(source, dict) else '(document)'}")
        start = load_start(source)
        scene = start.scene
        accuracy = start.accuracy
        base_dir = base_dir or start.base_dir
        if data is None or isinstance(data, (dict, DataDescription)):
            desc = describe_data(data) if data is not None else start.data
        else:
            desc = data_description_with(start.data, data, say=say)
    if desc.empty:
        named = f"{os.fspath(source)}: " if isinstance(source, (str, os.PathLike)) else ""
        raise DataError(f"{named}no data to evaluate against: the starting point names none; give data files "
                        "(--data PATH ...)")
    if target:
        desc = dataclasses.replace(desc, oifits=tuple({**e, "target": target} for e in desc.oifits))
    say("reading the data")
    comparison = desc.comparison(base_dir, accuracy=accuracy, lenient=lenient)
    if getattr(comparison, "target_reason", ""):
        say(f"judging the target {comparison.target} ({comparison.target_reason})")
    for group in comparison.left_out:
        say(f"not judged: {group}")
    plan = planned_outputs(out, comparison.kinds, fmts or ("png",), figures=figures, cube=cube)
    _refuse_existing(plan, force)
    say("computing the model at the data (" + ", ".join(comparison.kinds) + ")")
    result = comparison.compare(scene)
    tables = residual_tables(comparison, result)
    rows = chi2_breakdown(result, tables)
    with StagedOutput(out) as staging:
        tmp = planned_outputs(staging.path, comparison.kinds, fmts or ("png",), figures=figures, cube=cube)
        written = []
        write_csv(tmp["chi2"], {k: [r[k] for r in rows] for k in ("kind", "subset", "n", "chi2", "reduced", "weight")})
        written.append(tmp["chi2"])
        say("writing residual tables")
        written += write_residual_tables(tables, tmp["residuals"])
        cube_ds = None
        if cube or figures:
            say("computing the model cube")
            cube_ds = model_cube(scene, comparison, result, image_wavelengths=lams, npix=npix, progress=say)
        if cube:
            write_model_cube(cube_ds, tmp["cube"])
            written.append(tmp["cube"])
        if figures:
            say("drawing figures")
            written += write_figures(scene, comparison, result, cube_ds, tmp["figures"], dpi=dpi, progress=say)
        files = [staging.final(p) for p in written]
    return EvaluationReport(scene=scene, comparison=comparison, result=result, chi2=rows, files=files,
                            cube=cube_ds)
