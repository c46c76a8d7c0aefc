"""What an evaluation writes: figure names, sizes and formats, and the output plan.

:func:`planned_outputs` lists every file before anything is computed, so that an existing
output can be refused (or a half-written folder avoided) up front.
"""
from __future__ import annotations

from pathlib import Path

from ..errors import DiskExplorerError

__all__ = ["FIGURES", "FIGURE_SIZES_IN", "DEFAULT_DPI", "FORMATS", "DEFAULT_IMAGE_WAVELENGTHS",
           "planned_outputs", "figure_formats"]

#: Figure names, in the order they are drawn.
FIGURES = ("sed", "silicate_band", "vis2", "closure_phase", "image", "profiles")
#: Figure sizes in inches (width, height); with :data:`DEFAULT_DPI` a PNG has
#: width·dpi × height·dpi pixels (no tight bounding box, so sizes are predictable).
FIGURE_SIZES_IN = {"sed": (7.2, 4.8), "silicate_band": (7.2, 4.8), "vis2": (7.2, 4.8),
                   "closure_phase": (7.2, 4.8), "image": (9.6, 4.8), "profiles": (9.6, 4.8)}
DEFAULT_DPI = 100
#: File formats a figure can be written in.
FORMATS = ("png", "pdf")
#: Wavelengths (µm) of the model image cube: H, K, L, M and two N-band points.
DEFAULT_IMAGE_WAVELENGTHS = (1.65, 2.2, 3.5, 4.8, 8.5, 10.0, 12.5)


def _quiet(message):
    """Default progress sink: say nothing."""


def figure_formats(formats):
    """Figure formats as a tuple of lower-case names, e.g. ``"png, PDF"`` → ``("png", "pdf")``.

    Raises
    ------
    DiskExplorerError
        A format outside :data:`FORMATS`.
    """
    if isinstance(formats, str):
        formats = [f for f in formats.split(",")]
    out = []
    for f in formats:
        f = f.strip().lower().lstrip(".")
        if not f:
            continue
        if f not in FORMATS:
            raise DiskExplorerError(f"figure format {f!r} is not supported; choose from {', '.join(FORMATS)}")
        if f not in out:
            out.append(f)
    return tuple(out)


def planned_outputs(out, kinds, formats=("png",), figures=True, cube=True):
    """The files an evaluation writes into ``out``.

    Parameters
    ----------
    out : str or os.PathLike
        Output folder.
    kinds : sequence of str
        Data kinds present (``Comparison.kinds``).
    formats : sequence of str or str
        Figure formats (``"png"``, ``"pdf"``; a comma-separated string is accepted).
    figures, cube : bool
        Whether figures and the netCDF cube are written.

    Returns
    -------
    dict
        ``"chi2"``, ``"residuals"`` (kind → path), ``"cube"`` (path or None) and
        ``"figures"`` (name → list of paths).
    """
    out = Path(out)
    fmts = figure_formats(formats) if figures else ()
    return {
        "chi2": out / "chi2.csv",
        "residuals": {k: out / f"residuals_{k}.csv" for k in kinds},
        "cube": out / "model.nc" if cube else None,
        "figures": {name: [out / f"{name}.{fmt}" for fmt in fmts] for name in FIGURES} if fmts else {},
    }


def _all_paths(plan):
    paths = [plan["chi2"], *plan["residuals"].values()]
    if plan["cube"] is not None:
        paths.append(plan["cube"])
    for group in plan["figures"].values():
        paths.extend(group)
    return paths


def _refuse_existing(plan, force):
    if force:
        return
    existing = [p for p in _all_paths(plan) if p.exists()]
    if existing:
        more = f" (and {len(existing) - 1} more output(s))" if len(existing) > 1 else ""
        raise FileExistsError(f"{existing[0]} exists{more}; pass --force (force=True) to overwrite, or choose "
                              "another output folder")
