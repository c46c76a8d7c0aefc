"""The ``diskexplorer`` command line."""
from __future__ import annotations

import argparse
import os
import socket
import subprocess
import sys
from pathlib import Path

__all__ = ["main"]


def _free_port(preferred):
    with socket.socket() as s:
        try:
            s.bind(("127.0.0.1", preferred))
            return preferred
        except OSError:
            s.bind(("127.0.0.1", 0))
            return s.getsockname()[1]


def _cmd_demo(args):
    notebook = Path(__file__).resolve().parent / "app" / "explorer.ipynb"
    if not notebook.exists():
        print(f"diskexplorer: the app notebook {notebook} is missing", file=sys.stderr)
        return 2
    port = _free_port(args.port)
    env = dict(os.environ)
    if args.data:
        env["DISKEXPLORER_DATA"] = os.path.abspath(args.data)
    env.setdefault("OPENBLAS_NUM_THREADS", "1")
    print(f"diskexplorer: serving the explorer at http://127.0.0.1:{port}/  (Ctrl-C to stop)", flush=True)
    cmd = [sys.executable, "-m", "voila", str(notebook), "--no-browser", f"--port={port}",
           "--Voila.ip=127.0.0.1"]
    try:
        return subprocess.call(cmd, env=env)
    except KeyboardInterrupt:
        return 0


def _cmd_sample_data(args):
    from .sample import write_sample_data
    try:
        write_sample_data(args.out, overwrite=args.force)
    except FileExistsError as exc:
        print(f"diskexplorer sample-data: {exc}", file=sys.stderr)
        return 2
    return 0


def _cmd_species(args):
    from .dust import list_species
    for sp in list_species():
        print(f"{sp['name']:<24} ρ = {sp['density']:.2f} g/cm3  {sp['description']}")
        print(f"{'':<24} source: {sp['source']}")
    return 0


def build_parser():
    parser = argparse.ArgumentParser(prog="diskexplorer", description=__doc__)
    sub = parser.add_subparsers(dest="command", required=True)
    p = sub.add_parser("demo", help="serve the explorer on the sample data on 127.0.0.1")
    p.add_argument("--port", type=int, default=8866, help="port to serve on (default 8866; a free one if taken)")
    p.add_argument("--data", help="folder of data to open instead of the sample data")
    p.set_defaults(func=_cmd_demo)
    p = sub.add_parser("sample-data", help="regenerate the invented demo data set deterministically")
    p.add_argument("--out", default="sample_data", help="folder to write (default ./sample_data)")
    p.add_argument("--force", action="store_true", help="overwrite existing files")
    p.set_defaults(func=_cmd_sample_data)
    p = sub.add_parser("species", help="list the built-in dust species with their sources")
    p.set_defaults(func=_cmd_species)
    return parser


def main(argv=None):
    args = build_parser().parse_args(argv)
    return args.func(args)


if __name__ == "__main__":
    sys.exit(main())
