"""The ``diskexplorer`` command line: serve the explorer, regenerate the sample data,
list or add dust species, evaluate a model against data into a static report, scan
χ² over a grid of parameters on a dask cluster, and solve a ring's dust composition.

Every command answers ``--help``. Errors a user can cause (bad arguments, missing or
malformed files, outputs that exist already) end with one line on stderr and a
non-zero exit status: 2 for usage errors and refused overwrites, 1 for unreadable or
invalid input.
"""
from __future__ import annotations

import argparse
import os
import sys
import warnings
from pathlib import Path

__all__ = ["main"]


def _cmd_demo(args):
    from .errors import DiskExplorerError
    from .app.serving.server import DemoServer

    try:
        server = DemoServer(port=args.port, workdir=args.workdir, data=args.data,
                            idle_timeout=args.idle_timeout, token="" if args.no_token else None)
    except DiskExplorerError as exc:  # a bad or busy port, a missing folder: usage errors
        return _usage("demo", _one_line(exc))
    return server.serve_forever(say=lambda m: print(m, flush=True))


def _cmd_sample_data(args):
    from .sample import copy_sample_data, write_sample_data
    out = Path(args.out)
    try:
        if args.regenerate:
            written = write_sample_data(out, overwrite=args.force)
        else:
            written = copy_sample_data(out, overwrite=args.force)
            for path in written:
                print(f"wrote {path.resolve()}")
    except FileExistsError as exc:
        print(f"diskexplorer sample-data: {exc}; add --force to overwrite them", file=sys.stderr)
        return 2
    start = out.resolve() / "aurelis_start.json"
    print(f"{len(written)} files in {out.resolve()}; try: diskexplorer evaluate {start}")
    return 0


def _cmd_species(args):
    from .dust import list_species
    if args.add is not None:
        return _add_species(args)
    for name in ("nk", "density"):
        if getattr(args, name) is not None:
            return _usage("species", f"--{name} is only used with --add NAME")
    for sp in list_species():
        print(f"{sp['name']:<24} ρ = {sp['density']:.2f} g/cm3  {sp['description']}")
        print(f"{'':<24} source: {sp['source']}")
    return 0


def _usage(command, message):
    print(f"diskexplorer {command}: {message}", file=sys.stderr)
    return 2


def _add_species(args):
    """Compute κ of a user species and write it as a κ table (registration is per process)."""
    import numpy as np

    from .dust import library_grid, register_species, species_kappa

    if args.nk is None or args.density is None:
        return _usage("species", "--add needs --nk FILE (wavelength µm, n, k) and --density RHO (g/cm3)")
    if not os.path.isfile(args.nk):
        raise FileNotFoundError(f"{args.nk}: no such optical-constants file")
    out = Path(args.out or f"{args.add}_kappa_{args.method}.txt")
    if out.exists() and not args.force:
        raise FileExistsError(f"{out} exists; pass --force to overwrite it or --out to choose another name")
    size = None if args.method == "cde" else args.grain_size
    register_species(args.add, nk=args.nk, density=args.density, source=args.source or os.path.basename(args.nk),
                     description=f"user species from {os.path.basename(args.nk)}")
    print(f"computing κ of {args.add!r} ({args.method}{'' if size is None else f', a = {size:g} µm'}) "
          "on the library wavelength grid …", flush=True)
    lam = np.asarray(library_grid(), float)
    kappa = np.asarray(species_kappa(args.add, grain_size=size if size is not None else 0.1,
                                     shape=args.method, wavelength=lam), float)
    good = np.isfinite(kappa) & (kappa > 0)
    if not np.any(good):
        raise ValueError(f"the optical constants of {args.nk} do not overlap the library grid "
                         f"({lam[0]:g}–{lam[-1]:g} µm)")
    header = (f"kappa table of user species {args.add} (diskexplorer species --add)\n"
              f"optical constants: {args.nk}; density {args.density:g} g/cm3; method {args.method}"
              f"{'' if size is None else f'; grain size {size:g} um'}\n"
              "columns: wavelength [um], kappa_abs [cm2/g]")
    out.parent.mkdir(parents=True, exist_ok=True)
    np.savetxt(out, np.column_stack([lam[good], kappa[good]]), fmt="%.6e", header=header)
    print(f"wrote {out} ({int(good.sum())} rows, {lam[good][0]:g}–{lam[good][-1]:g} µm)")
    print("note: diskexplorer keeps no species registry between runs, so the species was registered for this "
          "command only. Use the table as a ring's dust (dust=\"" + str(out) + "\", or a starting point's "
          "{\"kind\": \"kappa_table\", \"path\": ...}), or register it in a session with "
          f"register_species({args.add!r}, kappa={str(out)!r}).")
    return 0


def _read_session_inputs(path):
    """Scene and data description of an explorer session file, or None if ``path`` is not one.

    The data are described as the explorer judged them: its files with their band,
    instrument and baseline filters and channel-bandpass switches.
    """
    from .errors import DiskExplorerError
    from .fitting.json_limits import read_json_document

    try:
        doc = read_json_document(path)
    except DiskExplorerError:
        return None  # let the starting-point reader report what is wrong
    if not (isinstance(doc, dict) and str(doc.get("schema", "")).startswith("diskexplorer-session/")):
        return None
    from .fitting.data_description import describe_loaded_data
    from .fitting.session_document import decode_session, read_session

    session = decode_session(read_session(path), base_dir=Path(path).resolve().parent, where=f"session {path}")
    desc = describe_loaded_data({k: v for k, v in session.data.items() if v}, session.bands, session.instruments,
                                session.baseline_range, session.bandpass_off, target=session.target or None)
    return session.scene, desc


def _cmd_evaluate(args):
    from .errors import DiskExplorerError
    from .report import FORMATS, data_description_with, evaluate
    from .report.outputs import MIN_NPIX, check_image_wavelengths

    # Every argument is checked before anything is read or written.
    formats = [f.strip().lower() for f in args.formats.split(",") if f.strip()]
    bad = [f for f in formats if f not in FORMATS]
    if bad or not formats:
        return _usage("evaluate", f"--formats {args.formats!r}: choose from {', '.join(FORMATS)}")
    if args.npix < MIN_NPIX:
        return _usage("evaluate", f"--npix {args.npix}: expected at least {MIN_NPIX} pixels per side")
    try:
        wavelengths = check_image_wavelengths(args.image_wavelengths)
    except DiskExplorerError as exc:
        return _usage("evaluate", f"--image-wavelengths {args.image_wavelengths!r}: {exc}")
    out = args.out or f"{Path(args.start).stem}_evaluation"
    if os.path.exists(out) and not os.path.isdir(out):
        return _usage("evaluate", f"--out {out}: is a file, not a folder; choose another output folder")
    if not os.path.exists(args.start):
        raise FileNotFoundError(f"{args.start}: no such starting-point or session file")

    def say(message):
        print(message, flush=True)

    session = _read_session_inputs(args.start)
    common = dict(out=out, formats=formats, force=args.force, progress=say,
                  image_wavelengths=wavelengths, npix=args.npix, lenient=args.lenient, target=args.target)
    if session is not None:
        scene, desc = session
        say(f"reading the session {args.start}")
        base = os.path.dirname(os.path.abspath(args.start))
        report = evaluate(scene, data=data_description_with(desc, args.data, say=say), base_dir=base, **common)
    else:
        report = evaluate(args.start, data=args.data, **common)
    print()
    print(report.chi2_text())
    print()
    print(f"wrote {len(report.files)} files to {out}")
    return 0


def _cmd_scan(args):
    from .scan_command import ScanUsageError, run_scan

    try:
        return run_scan(args, say=lambda m: print(m, flush=True))
    except ScanUsageError as exc:
        return _usage("scan", _one_line(exc))
    except KeyboardInterrupt:
        print("diskexplorer scan: interrupted; nothing written", file=sys.stderr)
        return 130


def _cmd_composition(args):
    from .composition_command import CompositionUsageError, run_composition

    try:
        return run_composition(args, say=lambda m: print(m, flush=True))
    except CompositionUsageError as exc:
        return _usage("composition", _one_line(exc))


def _version():
    from importlib import metadata

    try:
        return metadata.version("diskexplorer")
    except metadata.PackageNotFoundError:  # running from a source tree that is not installed
        from . import __version__

        return __version__


def build_parser():
    parser = argparse.ArgumentParser(prog="diskexplorer", description=__doc__)
    parser.add_argument("--version", action="version", version=f"diskexplorer {_version()}",
                        help="print the package version and exit")
    sub = parser.add_subparsers(dest="command", required=True)
    p = sub.add_parser(
        "demo", help="serve the explorer on 127.0.0.1 (the sample data, or yours with --data)",
        description="Serve the explorer as a local web app (voila) on 127.0.0.1 only, behind a random token: "
                    "open the printed address, which carries it. The page reads files only in --workdir "
                    "(default: the folder you start from) and the --data files and folders, and saves only "
                    "into --workdir. Ctrl-C or SIGTERM stops the server and every kernel it started; kernels "
                    "of closed pages stop after --idle-timeout.")
    p.add_argument("--port", type=int, default=8866, help="TCP port, 1-65535, must be free (default 8866)")
    p.add_argument("--data", metavar="PATH", nargs="+",
                   help="data files or folders to open instead of the sample (classified by content)")
    p.add_argument("--workdir", metavar="DIR", help="folder for the app's saves and relative file names "
                                                    "(default: the current folder)")
    p.add_argument("--idle-timeout", metavar="S", type=int, default=30,
                   help="seconds after which the kernel of a closed page is shut down (default 30)")
    p.add_argument("--no-token", action="store_true",
                   help="serve without the random token the page's address carries (not recommended: every "
                        "user of the host could then open the page)")
    p.set_defaults(func=_cmd_demo)
    p = sub.add_parser(
        "sample-data", help="copy the invented demo data set into a folder (or regenerate it)",
        description="Copy the sample files shipped with the package (three OIFITS files, photometry, an "
                    "N-band spectrum, a starting-point document and a README with the true parameters) "
                    "into --out. With --regenerate, compute them afresh from the demo scene instead "
                    "(deterministic). Existing files are never replaced without --force.")
    p.add_argument("--out", default="sample_data", help="folder to write (default ./sample_data)")
    p.add_argument("--regenerate", action="store_true",
                   help="recompute the files from the demo scene instead of copying the shipped ones")
    p.add_argument("--force", action="store_true", help="overwrite existing files")
    p.set_defaults(func=_cmd_sample_data)
    p = sub.add_parser(
        "species", help="list the dust species with their sources, or add one from optical constants",
        description="Without options: list every dust species with density and source. With --add: compute "
                    "the mass absorption coefficient κ of a new species from a user (n, k) file on the "
                    "library wavelength grid and write it as a κ table (wavelength µm, κ cm2/g) usable as "
                    "a ring's dust. diskexplorer keeps no species registry between runs.")
    p.add_argument("--add", metavar="NAME", help="name of a species to add from --nk")
    p.add_argument("--nk", metavar="FILE", help="optical constants: three columns, wavelength µm, n, k")
    p.add_argument("--density", metavar="RHO", type=float, help="bulk density of the material in g/cm3")
    p.add_argument("--method", choices=("dhs", "mie", "cde"), default="dhs",
                   help="grain shape method: distribution of hollow spheres (default), Mie spheres, or "
                        "continuous distribution of ellipsoids (size-independent)")
    p.add_argument("--grain-size", metavar="UM", type=float, default=0.1,
                   help="grain radius in µm for dhs and mie (default 0.1)")
    p.add_argument("--source", help="citation of the optical constants, kept as provenance")
    p.add_argument("--out", metavar="FILE", help="κ table to write (default NAME_kappa_METHOD.txt)")
    p.add_argument("--force", action="store_true", help="overwrite an existing κ table")
    p.set_defaults(func=_cmd_species)
    p = sub.add_parser(
        "evaluate", help="compare a model with data: χ² table, residual CSVs, netCDF model cube, figures",
        description="Evaluate the model of a starting-point document (diskexplorer.start JSON, as exported "
                    "by the explorer or diskexplorer.fitting.export_start) or of an explorer session file "
                    "against the data it names. Prints χ² per data kind and instrument and writes, into "
                    "--out: chi2.csv, residuals_<kind>.csv, model.nc (image cube, SED, model at the data) "
                    "and the figures sed, silicate_band, vis2, closure_phase, image and profiles.")
    p.add_argument("start", metavar="START.json", help="starting-point document or explorer session file")
    p.add_argument("--data", metavar="PATH", nargs="+",
                   help="data files or folders to use instead (OIFITS, one photometry table, one spectrum; "
                        "recognised by content, a folder's other files skipped with a note); each kind given "
                        "replaces the document's data of that kind, other kinds are kept")
    p.add_argument("--target", metavar="NAME",
                   help="the target to judge (OI_TARGET name); default: the one the document names, else the "
                        "science target (CATEGORY 'SCI'), else the one with most points")
    p.add_argument("--lenient", action="store_true",
                   help="read what conforms in OIFITS files that do not conform to the standard (each defect "
                        "is printed as a warning) instead of refusing them")
    p.add_argument("--out", metavar="DIR", help="output folder (default START_evaluation); the report is written "
                                                "beside it and moved in only when complete")
    p.add_argument("--formats", default="png", help="figure formats, comma-separated: png, pdf (default png)")
    p.add_argument("--image-wavelengths", default="1.65,2.2,3.5,4.8,8.5,10,12.5", metavar="UM,UM,...",
                   help="wavelengths of the model image cube in µm, positive and distinct "
                        "(default 1.65,2.2,3.5,4.8,8.5,10,12.5)")
    p.add_argument("--npix", type=int, default=256, help="image pixels per side, at least 16 (default 256)")
    p.add_argument("--force", action="store_true", help="overwrite existing outputs")
    p.set_defaults(func=_cmd_evaluate)
    p = sub.add_parser(
        "scan", help="χ² over a grid of parameters of a starting point, on a dask cluster, into netCDF",
        description="Scan the χ² of the starting point's model against the data it names over a regular "
                    "grid of parameters (every other parameter stays at the document's value) and write "
                    "the grid to a netCDF file (total χ² and χ² per data kind). Runs on a local dask cluster "
                    "(--workers), on a running dask scheduler (--scheduler tcp://HOST:PORT) or in this "
                    "process (--scheduler serial). Every argument is checked before the scan starts; the "
                    "file is written under a temporary name and renamed when complete; the best grid "
                    "point is printed.")
    p.add_argument("start", metavar="START.json", help="starting-point document (diskexplorer.start JSON)")
    p.add_argument("--axis", metavar="PATH=LO:HI:N[:log]", action="append", required=True,
                   help="a scanned parameter: N points from LO to HI in its declared unit, evenly spaced "
                        "(or in its logarithm with :log), e.g. rings.0.r_in=0.30:0.40:40; repeat for each "
                        "axis (the first varies slowest)")
    p.add_argument("--scheduler", metavar="ADDRESS",
                   help="a running dask scheduler, tcp://HOST:PORT, whose workers run the same diskexplorer "
                        "version; 'serial' runs in this process (default: a local cluster)")
    p.add_argument("--workers", type=int, metavar="N",
                   help="workers of the local cluster started without --scheduler (default: one per core)")
    p.add_argument("--out", metavar="FILE.nc", required=True, help="netCDF file to write")
    p.add_argument("--force", action="store_true", help="replace an existing --out file")
    p.set_defaults(func=_cmd_scan)
    p = sub.add_parser(
        "composition", help="solve a ring's dust mass fractions against data; drop-one test; iron vs carbon",
        description="Solve the non-negative mass fractions of candidate dust components in one ring of a "
                    "starting point (or explorer session) against the data it names, everything else held: a "
                    "linear start from the fluxes and coherent fluxes (non-negative least squares in the "
                    "optically thin limit), polished with the full model. Prints the fractions with 1σ "
                    "errors and χ² before and after; --drop-one drops each component in turn (Δχ², ΔBIC); "
                    "--compare A:B compares the ring with A and with B in its place (χ², reduced χ², k, ΔAIC, "
                    "ΔBIC). The criteria assume independent Gaussian errors. Nothing is written.")
    p.add_argument("start", metavar="START.json", help="starting-point document or explorer session file")
    p.add_argument("--ring", required=True, help="the ring to solve: its name or index (0 = first)")
    p.add_argument("--components", metavar="A,B,...",
                   help="candidate species, comma-separated (default: the ring's current mixture); see "
                        "'diskexplorer species'")
    p.add_argument("--kinds", metavar="KIND,...",
                   help="data kinds to judge, e.g. spectrum,corrflux (default: every kind with weight > 0)")
    p.add_argument("--sigma-in", action="store_true", help="also solve the ring's Σ_in (sets the band strength)")
    p.add_argument("--drop-one", action="store_true",
                   help="drop each component in turn, re-solve the others and print Δχ² and ΔBIC")
    p.add_argument("--compare", metavar="A:B", action="append",
                   help="compare the ring with species A and with B in its place, e.g. iron:amorphous_carbon "
                        "(repeatable)")
    p.add_argument("--scale-errors", action="store_true",
                   help="scale the errors by the reduced χ² (default: at face value)")
    p.add_argument("--data", metavar="PATH", nargs="+",
                   help="data files or folders to use instead, as for 'evaluate'")
    p.add_argument("--target", metavar="NAME", help="the target to judge (OI_TARGET name), as for 'evaluate'")
    p.add_argument("--lenient", action="store_true",
                   help="read what conforms in OIFITS files that do not conform to the standard")
    p.set_defaults(func=_cmd_composition)
    return parser


def main(argv=None):
    """Run the command line.

    Parameters
    ----------
    argv : list of str, optional
        Arguments without the program name (default ``sys.argv[1:]``).

    Returns
    -------
    int
        Exit status: 0 on success, 1 for unreadable or invalid input, 2 for usage errors
        and outputs that exist already (argparse exits with 2 itself on bad arguments).
    """
    from .errors import DiskExplorerError

    args = build_parser().parse_args(argv)
    command = args.command
    try:
        with warnings.catch_warnings():
            # A reader's warning already names its file and table: one line, without the
            # Python source line that the default display adds.
            warnings.showwarning = lambda message, category, *rest, **kw: _warn(command, message, category)
            return args.func(args)
    except FileExistsError as exc:
        print(f"diskexplorer {command}: {_one_line(exc)}", file=sys.stderr)
        return 2
    except (DiskExplorerError, FileNotFoundError, OSError, ValueError) as exc:
        # ValueError: numpy/astropy refusing a file's content after our own checks passed.
        print(f"diskexplorer {command}: {_one_line(exc)}", file=sys.stderr)
        return 1


def _warn(command, message, category):
    """Print one warning as one line on stderr: ``diskexplorer COMMAND: warning: ...``."""
    from .errors import DiskExplorerError

    text = " ".join(str(message).split())
    # Our own warnings speak for themselves; a library's says which kind it is.
    ours = category.__module__.split(".")[0] == "diskexplorer" or issubclass(category, DiskExplorerError)
    kind = "warning" if ours else f"warning ({category.__name__})"
    print(f"diskexplorer {command}: {kind}: {text}", file=sys.stderr, flush=True)


def _one_line(exc):
    text = str(exc) or type(exc).__name__
    return " ".join(text.split())


if __name__ == "__main__":
    sys.exit(main())
