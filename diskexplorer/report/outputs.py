"""What an evaluation writes: figure names, sizes and formats, and the output plan.

:func:`planned_outputs` lists every file before anything is computed, so that an existing
output can be refused (or a half-written folder avoided) up front.
"""
from __future__ import annotations

import math
import os
import shutil
import tempfile
from pathlib import Path

from ..errors import DiskExplorerError

__all__ = ["FIGURES", "DATA_FIGURES", "FIGURE_SIZES_IN", "DEFAULT_DPI", "FORMATS", "DEFAULT_IMAGE_WAVELENGTHS", "MIN_NPIX",
           "planned_outputs", "figure_formats", "check_image_wavelengths", "check_output_folder", "StagedOutput"]

#: Figure names, in the order they are drawn.
FIGURES = ("sed", "silicate_band", "species", "vis2", "closure_phase", "visibility_amplitude", "correlated_flux",
           "differential_phase", "image", "profiles")
#: Figures drawn only when the data hold their kind (the others are always drawn).
DATA_FIGURES = {"visibility_amplitude": "visamp", "correlated_flux": "corrflux", "differential_phase": "diffphi"}
#: Figure sizes in inches (width, height); with :data:`DEFAULT_DPI` a PNG has
#: width·dpi × height·dpi pixels (no tight bounding box, so sizes are predictable).
FIGURE_SIZES_IN = {"sed": (7.2, 4.8), "silicate_band": (7.2, 4.8), "species": (11.0, 4.8), "vis2": (7.2, 4.8),
                   "closure_phase": (7.2, 4.8), "visibility_amplitude": (7.2, 4.8),
                   "correlated_flux": (7.2, 4.8), "differential_phase": (9.6, 4.8),
                   "image": (9.6, 4.8), "profiles": (9.6, 4.8)}
DEFAULT_DPI = 100
#: File formats a figure can be written in.
FORMATS = ("png", "pdf")
#: Wavelengths (µm) of the model image cube: H, K, L, M and two N-band points.
DEFAULT_IMAGE_WAVELENGTHS = (1.65, 2.2, 3.5, 4.8, 8.5, 10.0, 12.5)
#: Fewest image pixels per side of the model cube.
MIN_NPIX = 16


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
        "figures": {name: [out / f"{name}.{fmt}" for fmt in fmts] for name in FIGURES
                    if name not in DATA_FIGURES or DATA_FIGURES[name] in kinds} if fmts else {},
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


def check_image_wavelengths(values):
    """The model cube's wavelengths as a tuple of floats, or a refusal saying what is wrong.

    Parameters
    ----------
    values : sequence of float or str
        Wavelengths in µm, or a comma-separated string of them.

    Returns
    -------
    tuple of float

    Raises
    ------
    DiskExplorerError
        No wavelength, a value that is not a number, not finite or not > 0, or the same
        wavelength twice (the message lists the offending values).
    """
    if isinstance(values, str):
        values = [v for v in values.split(",") if v.strip()]
    try:
        items = list(values)
    except TypeError:
        items = [values]
    out, bad = [], []
    for v in items:
        try:
            x = float(v)
        except (TypeError, ValueError):
            bad.append(repr(v.strip() if isinstance(v, str) else v))
            continue
        if not math.isfinite(x) or x <= 0:
            bad.append(f"{x:g}")
        out.append(x)
    if bad:
        raise DiskExplorerError(f"image wavelength(s) {', '.join(bad)}: expected positive numbers in µm "
                                "(e.g. 2.2,10)")
    if not out:
        raise DiskExplorerError("no image wavelength given: expected positive numbers in µm (e.g. 2.2,10)")
    dup = sorted({x for x in out if out.count(x) > 1})
    if dup:
        raise DiskExplorerError(f"image wavelength(s) {', '.join(f'{x:g}' for x in dup)} µm given twice")
    return tuple(out)


def check_output_folder(out):
    """Refuse an output folder that cannot be one (it, or a folder above it, is a file).

    Raises
    ------
    NotADirectoryError
        With a one-line message naming the file.
    """
    path = Path(os.path.abspath(out))
    if path.exists() and not path.is_dir():
        raise NotADirectoryError(f"{out}: is a file, not a folder; choose another output folder")
    for parent in path.parents:
        if parent.exists():
            if not parent.is_dir():
                raise NotADirectoryError(f"{parent}: is a file, so {out} cannot be made as an output folder")
            break


class StagedOutput:
    """A hidden temporary folder beside ``out`` that becomes ``out`` only when complete.

    ``with StagedOutput(out) as staging:`` writes go into ``staging.path``; when the block
    ends without an error, :meth:`commit` moves them into place (the folder is renamed when
    ``out`` does not exist; otherwise each file replaces its namesake in ``out`` and other
    files there stay). On an error the temporary folder is removed, so a failed run leaves
    no half-written output and does not block the next one.
    """

    def __init__(self, out):
        self.out = Path(out)
        target = Path(os.path.abspath(out))
        target.parent.mkdir(parents=True, exist_ok=True)
        # Beside the target, so the final move is a rename on the same file system.
        self.path = Path(tempfile.mkdtemp(prefix=f".{target.name}.", suffix=".partial", dir=target.parent))
        self._target = target

    def __enter__(self):
        return self

    def __exit__(self, exc_type, exc, tb):
        if exc_type is None:
            self.commit()
        else:
            shutil.rmtree(self.path, ignore_errors=True)
        return False

    def final(self, path):
        """Where ``path`` (inside the staging folder) ends up, under ``out`` as given."""
        return self.out / Path(path).relative_to(self.path)

    def commit(self):
        if not self.path.exists():
            return
        if not self._target.exists():
            os.replace(self.path, self._target)
            return
        for f in sorted(self.path.iterdir()):
            os.replace(f, self._target / f.name)
        self.path.rmdir()
