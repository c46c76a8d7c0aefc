"""``diskexplorer composition``: solve a ring's dust composition from a starting point.

Reads a starting-point document or an explorer session as ``evaluate`` does (its data, or
``--data`` files replacing them), solves the mass fractions of ``--components`` in
``--ring`` against the chosen data kinds with :func:`~diskexplorer.fitting.composition.
solve_composition`, and prints the fractions with their 1σ errors, χ² before and after, the
drop-one table (``--drop-one``) and one table of named alternatives per ``--compare A:B``
(the same ring with B in place of A: ΔAIC, ΔBIC). Nothing is written: the solve is a
proposal, applied in the explorer or by editing the document.
"""
from __future__ import annotations

import dataclasses
import os

from .errors import DiskExplorerError

__all__ = ["CompositionUsageError", "run_composition"]


class CompositionUsageError(DiskExplorerError):
    """A command-line argument of ``diskexplorer composition`` that cannot work (exit status 2)."""


def _split(text, option):
    items = [s.strip() for s in (text or "").split(",")]
    if text is not None and not all(items):
        raise CompositionUsageError(f"{option} {text!r}: expected comma-separated names without empty entries")
    return [s for s in items if s]


def _check_compare(text):
    parts = [s.strip() for s in text.split(":")]
    if len(parts) != 2 or not all(parts) or parts[0] == parts[1]:
        raise CompositionUsageError(f"--compare {text!r}: expected SPECIES:SPECIES, e.g. iron:amorphous_carbon")
    return parts[0], parts[1]


def _inputs(args, say):
    """(scene, comparison) of the starting point or session with ``--data``/``--target``/``--lenient``."""
    from .cli import _read_session_inputs
    from .report.inputs import data_description_with, load_start

    session = _read_session_inputs(args.start)
    if session is not None:
        scene, desc = session
        say(f"reading the session {args.start}")
        base = os.path.dirname(os.path.abspath(args.start))
        accuracy = 1
    else:
        say(f"reading the starting point {args.start}")
        start = load_start(args.start)
        scene, desc, base, accuracy = start.scene, start.data, start.base_dir, start.accuracy
    if args.data:
        desc = data_description_with(desc, args.data, say=say)
    if desc.empty:
        raise DiskExplorerError(f"{args.start}: no data to solve against: the starting point names none; give "
                                "data files (--data PATH ...)")
    if args.target:
        desc = dataclasses.replace(desc, oifits=tuple({**e, "target": args.target} for e in desc.oifits))
    say("reading the data")
    comparison = desc.comparison(base, accuracy=accuracy, lenient=args.lenient)
    if getattr(comparison, "target_reason", ""):
        say(f"judging the target {comparison.target} ({comparison.target_reason})")
    for group in comparison.left_out:
        say(f"not judged: {group}")
    return scene, comparison


def run_composition(args, say=print):
    """Run ``diskexplorer composition`` for parsed arguments (see :func:`diskexplorer.cli.build_parser`).

    Returns
    -------
    int
        Exit status 0.

    Raises
    ------
    CompositionUsageError
        Malformed options (exit 2), found before anything is read.
    DiskExplorerError, FileNotFoundError, OSError
        Unreadable inputs, an unknown ring, species or data kind (exit 1).
    """
    from .fitting.composition import (compare_alternatives, component_label, drop_one, solve_composition,
                                      swap_alternatives)

    components = _split(args.components, "--components") or None
    kinds = _split(args.kinds, "--kinds") or None
    swaps = [_check_compare(c) for c in args.compare or ()]
    if not os.path.exists(args.start):
        raise FileNotFoundError(f"{args.start}: no such starting-point or session file")
    scene, comparison = _inputs(args, say)
    options = dict(kinds=kinds, sigma_in=args.sigma_in)
    say(f"solving the composition of ring {args.ring}")
    result = solve_composition(scene, comparison, args.ring, components, scale_errors=args.scale_errors,
                               **options)
    say("")
    say(f"judged: {', '.join(f'{k} (weight {w:g})' for k, w in result.weights.items())}")
    say(result.summary())
    ring = result.rings[0]
    if ring.at_zero.any():
        say("at 0: the data drive these components to zero; their errors are not Gaussian (held at 0 for the "
            "others' errors)")
    if args.drop_one:
        say("")
        say(drop_one(scene, comparison, args.ring, ring.components, full=result, **options).table())
    for a, b in swaps:
        base = list(ring.components)
        names = [k if isinstance(k, str) else k[0] for k in base]
        if a not in names and b not in names:
            base.append(a)  # the comparison is about these two: the first joins the candidates
        alternatives = swap_alternatives(base, (a, b))
        say("")
        say(f"named alternatives, ring {ring.name}: "
            + "; ".join(f"{name} = {' + '.join(component_label(c) for c in comps)}"
                        for name, comps in alternatives.items()))
        say(compare_alternatives(scene, comparison, args.ring, alternatives, **options).table())
    return 0
