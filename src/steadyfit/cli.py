"""The command line: thin, it parses arguments and calls the library.

Exit status: 0 success, 2 bad input (one clear line, no traceback unless
``--debug``), 3 a replication target missed under ``run --strict``, 1 internal
error.  Heavy libraries load only inside commands, so
``--help`` answers at once.
"""

from __future__ import annotations

import argparse
import sys
from collections.abc import Sequence
from pathlib import Path


def _version() -> str:
    from importlib import metadata

    try:
        return metadata.version("steadyfit")
    except metadata.PackageNotFoundError:
        return "unknown (not installed)"


def _parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(
        prog="steadyfit",
        description="Estimate steady-state growth regressions from a TOML spec: implied "
                    "capital shares, restriction tests and plausibility verdicts.")
    p.add_argument("--debug", action="store_true", help="show tracebacks on errors")
    p.add_argument("--version", action="version", version=f"steadyfit {_version()}",
                   help="print steadyfit's version and exit")
    sub = p.add_subparsers(dest="command", required=True, metavar="COMMAND")

    run = sub.add_parser("run", help="estimate every equation on every sample of a spec")
    run.add_argument("spec", type=Path, help="the TOML spec")
    run.add_argument("--out", type=Path, default=None,
                     help="root folder for run folders (default: the spec's output.folder, "
                          "else ./reports)")
    run.add_argument("--quiet", action="store_true", help="print only the run folder's path")
    run.add_argument("--strict", action="store_true",
                     help="exit with status 3 when a replication target is missed")
    run.add_argument("--workers", type=_workers, default=1, metavar="N",
                     help="processes for the bootstrap's draws (default 1; results are the "
                          "same for any number)")
    run.add_argument("--scheduler", default=None, metavar="ADDRESS",
                     help="run the bootstrap's draws on this Dask scheduler "
                          "(tcp://host:port; needs the optional 'distributed' package)")

    check = sub.add_parser("check", help="validate a spec and its data without estimating")
    check.add_argument("spec", type=Path, help="the TOML spec")

    demo = sub.add_parser("demo", help="write the demonstration data and spec, then run them")
    demo.add_argument("--out", type=Path, default=Path("steadyfit-demo"),
                      help="folder for the demo files and its run folder "
                           "(default: ./steadyfit-demo)")
    demo.add_argument("--quiet", action="store_true", help="print only the run folder's path")

    comp = sub.add_parser("compare", help="list the verdicts, settings, inputs and quantities "
                                          "that differ between two runs")
    comp.add_argument("run_a", type=Path, help="a run folder (or its results.json)")
    comp.add_argument("run_b", type=Path, help="another run folder")
    comp.add_argument("--tolerance", type=float, default=1e-9,
                      help="absolute difference below which a quantity counts as unchanged "
                           "(default 1e-9)")
    comp.add_argument("--html", type=Path, default=None,
                      help="also write the comparison as an HTML page to this file")
    comp.add_argument("--verdicts-only", action="store_true",
                      help="show only the verdicts that changed (and the count line)")
    from .calibrate.commands import add_parsers

    for sp in (run, check, demo, comp, *add_parsers(sub)):
        sp.add_argument("--debug", action="store_true", default=argparse.SUPPRESS,
                        help=argparse.SUPPRESS)
    return p


def _workers(text: str) -> int:
    try:
        n = int(text)
    except ValueError:
        n = 0
    if not 1 <= n <= 256:
        raise argparse.ArgumentTypeError(f"a whole number from 1 to 256, not '{text}'")
    return n


def _run(spec_path: Path, out: Path | None, quiet: bool, strict: bool = False,
         workers: int = 1, scheduler: str | None = None) -> int:
    from .pipeline import default_output_root, run
    from .report.runfolder import write_run
    from .report.text import render_text, terminal
    from .robust.execute import Execution
    from .spec import load_spec

    spec = load_spec(spec_path)
    findings = run(spec, Execution(workers, scheduler, not quiet and sys.stderr.isatty()))
    for w in findings.warnings:
        print(f"warning: {w}", file=sys.stderr)
    folder = write_run(findings, out if out is not None else default_output_root(spec),
                       command=["steadyfit", *sys.argv[1:]])
    if not quiet:
        width, colour = terminal()
        print(render_text(findings, width=width, colour=colour))
        print()
        line = f"run folder: {folder}"
        print(line if len(line) <= width else f"run folder:\n{folder}")
    else:
        print(folder)
    missed = [t for t in findings.scorecard if not t.met]
    if missed:
        print(f"steadyfit: {len(missed)} of {len(findings.scorecard)} replication targets "
              "missed: " + "; ".join(f"{t.equation}/{t.sample} {t.quantity}" for t in missed),
              file=sys.stderr)
        if strict:
            return 3
    return 0


def _compare(a: Path, b: Path, tolerance: float, html_out: Path | None,
             verdicts_only: bool = False) -> int:
    from .compare import compare_runs, render_comparison_html, render_comparison_text
    from .errors import InputError
    from .report.text import terminal

    comparison = compare_runs(a, b, tolerance)
    width, colour = terminal()
    print(render_comparison_text(comparison, verdicts_only, width, colour))
    if html_out is not None:
        if html_out.exists() and html_out.is_dir():
            raise InputError(f"'{html_out}' is a folder; give a file name", "--html")
        if not html_out.parent.exists():
            raise InputError(f"folder '{html_out.parent}' does not exist", "--html")
        tmp = html_out.with_name(f".{html_out.name}.partial")
        tmp.write_text(render_comparison_html(comparison, verdicts_only), encoding="utf-8")
        tmp.replace(html_out)
        print(f"\ncomparison page: {html_out}")
    return 0


def _check(spec_path: Path) -> int:
    import textwrap

    from .pipeline import plan
    from .report.text import terminal

    p = plan(spec_path)
    width = terminal()[0]

    def say(text: str, indent: str = "", more: str = "") -> None:
        print("\n".join(textwrap.wrap(text, width, initial_indent=indent,
                                      subsequent_indent=more or indent)) or "")

    say(f"spec '{spec_path}' is valid; data '{p.table.path.name}' has "
        f"{p.table.n_economies} economies")
    for w in (*p.spec.notices, *p.table.warnings):
        say(w, "warning: ", "  ")
    samples = {c.selection.sample: c.selection for c in p.cells}
    print("\nsamples:")
    for name, sel in samples.items():
        say(f"{name}: {sel.n_in_sample} economies (filter: {sel.filter or 'all'})", "  ", "    ")
    print("\nwould estimate:")
    for c in p.cells:
        extra = " (+ nonlinear least squares)" if c.structural else ""
        say(f"{c.equation} [{c.form.key}] on {c.selection.sample}: {c.selection.nobs} economies, "
            f"{len(c.selection.dropped)} dropped{extra}", "  ", "    ")
        for drop in c.selection.dropped:
            say(f"{drop.economy}: {drop.reason}", "      - ", "        ")
    if p.table.panel is not None:
        panel = p.table.panel
        print(f"\nperiod panel ({panel.length}-year periods from {panel.first_year}):")
        for line in panel.shape.lines():
            say(line, "  ", "    ")
        if panel.missing:
            say("economy-periods that could not be built:", "  ", "    ")
        for miss in panel.missing[:10]:
            say(f"{miss.economy}, period ending {miss.year}: {miss.reason}", "    - ", "      ")
        if len(panel.missing) > 10:
            say(f"and {len(panel.missing) - 10} more", "    - ", "      ")
        methods = ", ".join(p.spec.body.panel.estimators)
        print("\nwould estimate on the panel:")
        for cell in p.panels:
            say(f"{cell.equation} [{cell.form.key}] on {cell.sample}: {methods}", "  ", "    ")
    if p.spec.body.target:
        print(f"\n{len(p.spec.body.target)} replication targets will be checked")
    return 0


def _demo(out: Path, quiet: bool) -> int:
    from .demo import write_demo

    spec_path = write_demo(out)
    if not quiet:
        print(f"demo data and spec written to {out}/")
    return _run(spec_path, out / "reports", quiet)


# signals received during the current command: an interrupt that lands while a compiled
# module is being imported comes back as that module's ImportError, not as the interrupt
_RECEIVED: list[int] = []


def _on_sigterm(signum: int, frame: object) -> None:
    from .errors import Terminated

    _RECEIVED.append(signum)
    raise Terminated(signum)


def _on_sigint(signum: int, frame: object) -> None:
    _RECEIVED.append(signum)
    raise KeyboardInterrupt


def main(argv: Sequence[str] | None = None) -> int:
    import signal
    import threading

    args = _parser().parse_args(argv)
    from .errors import InputError, Terminated

    previous = previous_int = None
    _RECEIVED.clear()
    if threading.current_thread() is threading.main_thread():
        # SIGTERM ends the run through the same clean-up as Ctrl-C: no temporary folder is left
        previous = signal.signal(signal.SIGTERM, _on_sigterm)
        previous_int = signal.signal(signal.SIGINT, _on_sigint)
    try:
        if args.command == "run":
            return _run(args.spec, args.out, args.quiet, args.strict, args.workers,
                        args.scheduler)
        if args.command == "check":
            return _check(args.spec)
        if args.command == "compare":
            return _compare(args.run_a, args.run_b, args.tolerance, args.html,
                            args.verdicts_only)
        if args.command == "demo":
            return _demo(args.out, args.quiet)
        from .calibrate.commands import run_command

        return run_command(args)
    except InputError as exc:
        if args.debug:
            raise
        print(f"steadyfit: error: {exc}", file=sys.stderr)
        return 2
    except BrokenPipeError:  # output piped into a reader that stopped early (head, less)
        import os

        os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        return 0
    except KeyboardInterrupt:
        print("steadyfit: interrupted", file=sys.stderr)
        return 130
    except Terminated:
        print("steadyfit: terminated", file=sys.stderr)
        return 143
    except Exception as exc:  # an internal error: say so, keep the traceback behind --debug
        if _RECEIVED:  # the error is how an interrupted import reported the signal
            interrupted = _RECEIVED[0] == signal.SIGINT
            print(f"steadyfit: {'interrupted' if interrupted else 'terminated'}",
                  file=sys.stderr)
            return 130 if interrupted else 143
        if args.debug:
            raise
        from .errors import quote

        print(f"steadyfit: internal error: {type(exc).__name__}: {quote(exc, 200)} "
              "(run again with --debug for the traceback)", file=sys.stderr)
        return 1
    finally:
        if previous is not None:
            signal.signal(signal.SIGTERM, previous)
        if previous_int is not None:
            signal.signal(signal.SIGINT, previous_int)


if __name__ == "__main__":
    sys.exit(main())
