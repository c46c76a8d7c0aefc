"""The whole evaluation: read, compare, and write tables, the model cube and figures."""
from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

from ..errors import DataError, DiskExplorerError
from .cube import model_cube, write_model_cube
from .figures import write_figures
from .inputs import data_description_with, load_start
from .outputs import DEFAULT_DPI, DEFAULT_IMAGE_WAVELENGTHS, FORMATS, _quiet, _refuse_existing, figure_formats, \
    planned_outputs
from .tables import chi2_rows, format_chi2_table, residual_tables, write_csv, write_residual_tables

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
        Rows of :func:`chi2_rows` (per kind, per instrument, total).
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
        """The χ² table as aligned text."""
        return format_chi2_table(self.chi2)


def evaluate(source, out="evaluation", data=None, formats=("png",), force=False, progress=None, *,
             base_dir=None, image_wavelengths=DEFAULT_IMAGE_WAVELENGTHS, npix=256, dpi=DEFAULT_DPI,
             figures=True, cube=True):
    """Evaluate a model against its data and write tables, a model cube and figures.

    Parameters
    ----------
    source : str, os.PathLike, dict, StartingPoint or Scene
        A starting-point document (path, dict or read), or a bare :class:`Scene` (then
        ``data`` names the data).
    out : str or os.PathLike
        Output folder (created if needed).
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
        Wavelengths of the image cube in µm.
    npix : int
        Image pixels per side.
    dpi : int
        Resolution of raster figures.
    figures, cube : bool
        Whether to draw figures and write the netCDF cube.

    Returns
    -------
    EvaluationReport

    Raises
    ------
    FileExistsError
        If an output exists and ``force`` is False.
    SeedError, DataError, DiskExplorerError
        Bad documents, data files or arguments.
    FileNotFoundError
        A data file that does not exist.

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
    accuracy = 1
    if isinstance(source, Scene):
        scene = source
        if data is None or isinstance(data, (dict, DataDescription)):
            desc = describe_data(data)
        else:
            desc = data_description_with(None, list(data))
    else:
        say(f"reading the starting point {source if not isinstance(source, dict) else '(document)'}")
        start = load_start(source)
        scene = start.scene
        accuracy = start.accuracy
        base_dir = base_dir or start.base_dir
        if data is None or isinstance(data, (dict, DataDescription)):
            desc = describe_data(data) if data is not None else start.data
        else:
            desc = data_description_with(start.data, list(data))
    if desc.empty:
        raise DataError("no data to evaluate against: the starting point names none; give data files "
                        "(--data PATH ...)")
    say("reading the data")
    comparison = desc.comparison(base_dir, accuracy=accuracy)
    plan = planned_outputs(out, comparison.kinds, fmts or ("png",), figures=figures, cube=cube)
    _refuse_existing(plan, force)
    say("computing the model at the data (" + ", ".join(comparison.kinds) + ")")
    result = comparison.compare(scene)
    tables = residual_tables(comparison, result)
    rows = chi2_rows(result, tables)
    Path(out).mkdir(parents=True, exist_ok=True)
    files = []
    write_csv(plan["chi2"], {k: [r[k] for r in rows] for k in ("kind", "subset", "n", "chi2", "reduced", "weight")})
    files.append(plan["chi2"])
    say("writing residual tables")
    files += write_residual_tables(tables, plan["residuals"])
    cube_ds = None
    if cube or figures:
        say("computing the model cube")
        cube_ds = model_cube(scene, comparison, result, image_wavelengths=image_wavelengths, npix=npix,
                             progress=say)
    if cube:
        if plan["cube"].exists():
            plan["cube"].unlink()  # netCDF4 refuses to clobber an open-for-read file; force was given
        write_model_cube(cube_ds, plan["cube"])
        files.append(plan["cube"])
        say(f"wrote {plan['cube']}")
    if figures:
        say("drawing figures")
        files += write_figures(scene, comparison, result, cube_ds, plan["figures"], dpi=dpi, progress=say)
    return EvaluationReport(scene=scene, comparison=comparison, result=result, chi2=rows, files=files,
                            cube=cube_ds)
