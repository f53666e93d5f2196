"""The command line: thin, it parses arguments and calls the library.

Exit status: 0 success, 2 bad input (one clear line, no traceback unless
``--debug``), 1 internal error.  Heavy libraries load only inside commands, so
``--help`` answers at once.
"""

from __future__ import annotations

import argparse
import sys
from collections.abc import Sequence
from pathlib import Path


def _parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(
        prog="steadyfit",
        description="Estimate steady-state growth regressions from a TOML spec: implied "
                    "capital shares, restriction tests and plausibility verdicts.")
    p.add_argument("--debug", action="store_true", help="show tracebacks on errors")
    sub = p.add_subparsers(dest="command", required=True, metavar="COMMAND")

    run = sub.add_parser("run", help="estimate every equation on every sample of a spec")
    run.add_argument("spec", type=Path, help="the TOML spec")
    run.add_argument("--out", type=Path, default=None,
                     help="root folder for run folders (default: the spec's output.folder, "
                          "else ./reports)")
    run.add_argument("--quiet", action="store_true", help="print only the run folder's path")

    check = sub.add_parser("check", help="validate a spec and its data without estimating")
    check.add_argument("spec", type=Path, help="the TOML spec")

    demo = sub.add_parser("demo", help="write the demonstration data and spec, then run them")
    demo.add_argument("--out", type=Path, default=Path("steadyfit-demo"),
                      help="folder for the demo files and its run folder "
                           "(default: ./steadyfit-demo)")
    demo.add_argument("--quiet", action="store_true", help="print only the run folder's path")
    for sp in (run, check, demo):
        sp.add_argument("--debug", action="store_true", default=argparse.SUPPRESS,
                        help=argparse.SUPPRESS)
    return p


def _run(spec_path: Path, out: Path | None, quiet: bool) -> int:
    from .pipeline import default_output_root, run
    from .report.runfolder import write_run
    from .report.text import render_text
    from .spec import load_spec

    spec = load_spec(spec_path)
    findings = run(spec)
    for w in findings.warnings:
        print(f"warning: {w}", file=sys.stderr)
    folder = write_run(findings, out if out is not None else default_output_root(spec),
                       command=["steadyfit", *sys.argv[1:]])
    if not quiet:
        print(render_text(findings))
        print()
        print(f"run folder: {folder}")
    else:
        print(folder)
    return 0


def _check(spec_path: Path) -> int:
    from .pipeline import plan

    p = plan(spec_path)
    print(f"spec '{spec_path}' is valid; data '{p.table.path.name}' has "
          f"{p.table.n_economies} economies")
    for w in p.table.warnings:
        print(f"warning: {w}")
    samples = {c.selection.sample: c.selection for c in p.cells}
    print("\nsamples:")
    for name, sel in samples.items():
        print(f"  {name}: {sel.n_in_sample} economies (filter: {sel.filter or 'all'})")
    print("\nwould estimate:")
    for c in p.cells:
        d = c.design
        print(f"  {d.equation} [{d.form.key}] on {d.sample}: {d.nobs} economies, "
              f"{len(c.selection.dropped)} dropped")
        for drop in c.selection.dropped:
            print(f"      - {drop.economy}: {drop.reason}")
    return 0


def _demo(out: Path, quiet: bool) -> int:
    from .demo import write_demo

    spec_path = write_demo(out)
    if not quiet:
        print(f"demo data and spec written to {out}/")
    return _run(spec_path, out / "reports", quiet)


def main(argv: Sequence[str] | None = None) -> int:
    args = _parser().parse_args(argv)
    from .errors import InputError

    try:
        if args.command == "run":
            return _run(args.spec, args.out, args.quiet)
        if args.command == "check":
            return _check(args.spec)
        return _demo(args.out, args.quiet)
    except InputError as exc:
        if args.debug:
            raise
        print(f"steadyfit: error: {exc}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("steadyfit: interrupted", file=sys.stderr)
        return 130
    except Exception as exc:  # an internal error: say so, keep the traceback behind --debug
        if args.debug:
            raise
        print(f"steadyfit: internal error: {type(exc).__name__}: {exc} "
              "(run again with --debug for the traceback)", file=sys.stderr)
        return 1


if __name__ == "__main__":
    sys.exit(main())
