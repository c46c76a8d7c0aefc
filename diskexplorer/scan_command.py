"""``diskexplorer scan``: a χ² grid from a starting point, on a dask cluster or in process.

For grids too large for the app. Every argument is checked before anything runs (axis
syntax, parameter paths, ranges, the scheduler address, the output name); the grid runs
with :func:`~diskexplorer.fitting.scan_grid`; a progress bar updates in place on stderr;
the netCDF result is written beside ``--out`` under a temporary name and renamed into
place only when complete, and an existing file is never replaced without ``--force``.
"""
from __future__ import annotations

import math
import os
import re
import sys
import tempfile
import time
from pathlib import Path

from .errors import DiskExplorerError

__all__ = ["ScanUsageError", "parse_axis", "check_scheduler", "ProgressBar", "write_atomically",
           "run_scan"]

_AXIS_HELP = "expected PATH=LO:HI:N or PATH=LO:HI:N:log (e.g. rings.0.r_in=0.30:0.40:40)"
_ADDRESS = re.compile(r"^(tcp|tls)://(\[[0-9a-fA-F:]+\]|[A-Za-z0-9.\-_]+):(\d{1,5})$")


class ScanUsageError(DiskExplorerError):
    """A command-line argument of ``diskexplorer scan`` that cannot work (exit status 2)."""


def parse_axis(text):
    """One ``--axis`` argument as ``(path, (lo, hi, n, scale))``.

    Parameters
    ----------
    text : str
        ``PATH=LO:HI:N`` or ``PATH=LO:HI:N:log`` (``:linear`` is the default), values in the
        parameter's declared unit, N ≥ 2 points from LO to HI inclusive, LO < HI.

    Raises
    ------
    ScanUsageError
        The syntax, a number, or the range is malformed (the message quotes the argument).
    """
    where = f"--axis {text!r}"
    path, eq, rest = text.partition("=")
    parts = rest.split(":")
    if not eq or not path.strip() or len(parts) not in (3, 4):
        raise ScanUsageError(f"{where}: {_AXIS_HELP}")
    scale = parts[3].strip().lower() if len(parts) == 4 else "linear"
    if scale not in ("log", "linear"):
        raise ScanUsageError(f"{where}: scale {parts[3]!r}; expected log or linear")
    try:
        lo, hi = float(parts[0]), float(parts[1])
    except ValueError:
        raise ScanUsageError(f"{where}: LO and HI must be numbers; {_AXIS_HELP}") from None
    try:
        n = int(parts[2])
    except ValueError:
        raise ScanUsageError(f"{where}: N = {parts[2]!r}; expected a whole number of points ≥ 2") from None
    if not (math.isfinite(lo) and math.isfinite(hi)):
        raise ScanUsageError(f"{where}: LO and HI must be finite")
    if n < 2:
        raise ScanUsageError(f"{where}: N = {n}; expected at least 2 points")
    if not lo < hi:
        raise ScanUsageError(f"{where}: LO = {lo:g} is not below HI = {hi:g}")
    if scale == "log" and lo <= 0:
        raise ScanUsageError(f"{where}: a log axis needs LO > 0")
    return path.strip(), (lo, hi, n, scale)


def check_scheduler(text):
    """``"serial"`` or a scheduler address ``tcp://HOST:PORT`` (or ``tls://``), checked.

    Raises
    ------
    ScanUsageError
        Anything else, or a port outside 1–65535.
    """
    if text == "serial":
        return text
    m = _ADDRESS.match(text or "")
    if m is None or not 1 <= int(m.group(3)) <= 65535:
        raise ScanUsageError(f"--scheduler {text!r}: expected a dask scheduler address such as "
                             "tcp://10.0.0.5:8786 (or 'serial' to run in this process)")
    return text


class ProgressBar:
    """A one-line progress bar on a text stream, redrawn in place with a carriage return.

    Parameters
    ----------
    total : int
        Grid points of the scan.
    stream : file, optional
        Default ``sys.stderr``.
    interval : float
        Least time between redraws, s (the last update is always drawn).
    width : int
        Characters of the bar.
    """

    def __init__(self, total, stream=None, interval=0.2, width=30, clock=time.monotonic):
        self.total = int(total)
        self.stream = stream or sys.stderr
        self.interval = float(interval)
        self.width = int(width)
        self.clock = clock
        self.t0 = clock()
        self._last = -float("inf")
        self.done = 0

    def line(self, done):
        """The text of the bar for ``done`` points."""
        frac = done / self.total if self.total else 1.0
        filled = int(round(frac * self.width))
        elapsed = self.clock() - self.t0
        left = f", {elapsed / frac - elapsed:.0f} s left" if 0 < frac < 1 else ""
        return (f"[{'#' * filled}{'.' * (self.width - filled)}] {done}/{self.total} points "
                f"{100 * frac:3.0f} %  {elapsed:.0f} s{left}")

    def update(self, done, total=None):
        """Redraw for ``done`` points (at most every ``interval`` s, and always at the end)."""
        self.done = int(done)
        now = self.clock()
        if self.done < self.total and now - self._last < self.interval:
            return
        self._last = now
        # Spaces overwrite the tail of a longer previous line.
        self.stream.write("\r" + self.line(self.done).ljust(78))
        self.stream.flush()

    def close(self):
        """End the line."""
        self.stream.write("\n")
        self.stream.flush()


def write_atomically(ds, out, force=False):
    """Write a scan to netCDF at ``out`` through a temporary file in the same folder.

    The file appears under its name only when complete (``os.replace``); a failed write
    leaves no partial file.

    Returns
    -------
    pathlib.Path
        ``out``, or the temporary file kept when ``out`` appeared meanwhile and ``force``
        is False (nothing the user made is replaced).
    """
    from .fitting.scan import write_scan

    out = Path(out)
    fd, tmp = tempfile.mkstemp(prefix=f".{out.name}.", suffix=".part", dir=out.parent or ".")
    os.close(fd)
    tmp = Path(tmp)
    try:
        write_scan(ds, tmp, overwrite=True)
        if out.exists() and not force:
            return tmp
        os.replace(tmp, out)
    except BaseException:
        tmp.unlink(missing_ok=True)
        raise
    return out


def _check_out(out, force):
    path = Path(out)
    if path.suffix.lower() != ".nc":
        raise ScanUsageError(f"--out {out}: expected a netCDF file name ending in .nc")
    if path.is_dir():
        raise ScanUsageError(f"--out {out}: is a folder; name the netCDF file to write")
    if not path.parent.is_dir() and str(path.parent) not in ("", "."):
        raise ScanUsageError(f"--out {out}: the folder {path.parent} does not exist")
    if path.exists() and not force:
        raise FileExistsError(f"--out {out} exists; add --force to replace it")
    return path


def run_scan(args, say=print):
    """Run ``diskexplorer scan`` for parsed arguments (see :func:`diskexplorer.cli.build_parser`).

    Returns
    -------
    int
        Exit status (0 done; 1 if no grid point could be evaluated).

    Raises
    ------
    ScanUsageError, FileExistsError
        Bad arguments (exit 2).
    DiskExplorerError, FileNotFoundError, OSError
        Unreadable inputs, an unreachable scheduler (exit 1).
    """
    from .errors import ParameterError

    # 1. Arguments that need no file.
    texts = list(args.axis or [])
    axes = [parse_axis(a) for a in texts]
    if not axes:
        raise ScanUsageError("give at least one --axis PATH=LO:HI:N[:log]")
    scheduler = check_scheduler(args.scheduler) if args.scheduler is not None else None
    if args.workers is not None:
        if scheduler is not None:
            raise ScanUsageError("--workers sets the size of the local cluster; the workers of "
                                 "--scheduler are started with the scheduler")
        if args.workers < 1:
            raise ScanUsageError(f"--workers {args.workers}: expected at least 1")
    out = _check_out(args.out, args.force)
    if not os.path.isfile(args.start):
        raise FileNotFoundError(f"{args.start}: no such starting-point file")

    # 2. The starting point, and the axes against its scene (paths, valid ranges).
    from .fitting.scan import _parse_axes, best_point, scan_grid
    from .fitting.start_import import read_start

    start = read_start(args.start)
    scene = start.scene
    for text, (path, spec) in zip(texts, axes):
        try:
            _parse_axes(scene, [(path, spec)])
        except DiskExplorerError as exc:
            raise ScanUsageError(f"--axis {text!r}: {exc}") from None
    try:
        _parse_axes(scene, axes)  # the same parameter twice under two spellings
    except DiskExplorerError as exc:
        raise ScanUsageError(f"--axis: {exc}") from None
    if start.data.empty:
        raise ParameterError(f"{args.start}: the starting point names no data; a scan needs data")
    comparison = start.comparison()
    total = math.prod(spec[2] for _, spec in axes)

    # 3. Where to run.
    client, owned = None, []
    if scheduler == "serial":
        where = "serial"
    elif scheduler is not None:
        from distributed import Client

        say(f"connecting to {scheduler} …")
        try:
            client = Client(scheduler, timeout="10s")
        except (OSError, TimeoutError) as exc:
            raise OSError(f"--scheduler {scheduler}: no dask scheduler answered ({exc})") from None
        owned.append(client)
        where = client
    else:
        from distributed import Client, LocalCluster

        n = args.workers or os.cpu_count() or 1
        say(f"starting a local dask cluster of {n} worker{'s' if n > 1 else ''} …")
        cluster = LocalCluster(n_workers=n, threads_per_worker=1, processes=True, host="127.0.0.1",
                               dashboard_address=None)
        client = Client(cluster)
        owned += [client, cluster]
        where = client
    try:
        if client is not None:
            workers = len(client.scheduler_info().get("workers", {}))
            say(f"{total} grid points on {workers} worker{'s' if workers != 1 else ''} of "
                f"{client.scheduler.address}")
        else:
            say(f"{total} grid points in this process")
        bar = ProgressBar(total)
        t0 = time.perf_counter()
        try:
            ds = scan_grid(scene, comparison, axes, scheduler=where, progress=bar.update)
        finally:
            bar.close()
        elapsed = time.perf_counter() - t0
    finally:
        for obj in owned:
            obj.close()

    written = write_atomically(ds, out, force=args.force)
    say(f"{total} points in {elapsed:.1f} s ({total / elapsed:.0f} points/s)")
    if written != out:
        say(f"{out} appeared during the scan and was kept; the result is in {written}")
    else:
        say(f"wrote {out}")
    try:
        best = best_point(ds)
    except ParameterError:
        say("no grid point could be evaluated (every one refused by the model)")
        return 1
    from .fitting.paths import spec_for

    n_total = int(ds.attrs.get("npoints_total", 0))
    reduced = f", χ²/N = {best['chi2'] / n_total:.4g}" if n_total else ""
    say(f"best grid point: χ² = {best['chi2']:.6g}{reduced}")
    for dim in ds["chi2"].dims:
        path, unit = ds[dim].attrs["path"], spec_for(ds[dim].attrs["path"]).unit
        say(f"  {path} = {best[path]:.6g}{(' ' + unit) if unit else ''}")
    return 0
