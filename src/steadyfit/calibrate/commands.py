"""The calibrators' subcommands: argument definitions and the thin calls into the library.

Each command computes with a plain function of :mod:`steadyfit.calibrate`, turns
the result into a page (:mod:`steadyfit.report.calibration`), prints it and writes
it as a run folder under ``--out`` (default ``./reports``).
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path
from typing import Any

from ..errors import InputError

COMMANDS = ("from-table", "ratios", "required-share", "transition", "accounting")


def add_parsers(sub: Any) -> list[argparse.ArgumentParser]:
    """Add the calibrators' subcommands to the top-level subparsers."""
    table = sub.add_parser("from-table", help="implied shares, their uncertainty and a verdict "
                                              "from a printed regression table alone")
    table.add_argument("file", type=Path, nargs="?",
                       help="the table as TOML (see the README); or give it with the options")
    table.add_argument("--form", default="levels", help="levels (default) or growth")
    table.add_argument("--capital", nargs="+", default=["physical"],
                       help="physical, and human_rate or human_stock (default: physical)")
    table.add_argument("--unrestricted", action="store_true",
                       help="the slopes are unrestricted (default: restricted)")
    table.add_argument("--slope", action="append", default=[], metavar="NAME=COEF,SE",
                       help="one printed slope, by the form's regressor name (repeat)")
    table.add_argument("--correlation", action="append", default=[], metavar="A,B=R",
                       help="a printed correlation between two slopes (repeat)")
    table.add_argument("--span", type=float, help="years the growth form's growth spans")
    table.add_argument("--mean-ngd", type=float, help="the sample's mean n + g + delta")
    table.add_argument("--mean-investment", type=float,
                       help="the sample's mean investment rate s_k (fraction)")
    table.add_argument("--title", default="", help="the paper and table, for the report")
    table.add_argument("--confidence", type=float, help="interval coverage (default 0.95)")
    table.add_argument("--level", type=float, help="test level (default 0.05)")

    ratios = sub.add_parser("ratios", help="predicted steady-state income ratios, each "
                                           "factor's contribution and K/Y")
    ratios.add_argument("--alpha", type=float, help="physical capital share")
    ratios.add_argument("--beta", type=float, default=0.0, help="human capital share")
    ratios.add_argument("--g-delta", type=float, default=None,
                        help="g + delta (default 0.05, or the run's)")
    ratios.add_argument("--from-run", type=Path, metavar="RUN_FOLDER",
                        help="take alpha, beta and g + delta from an estimation run's "
                             "--equation on --sample")
    ratios.add_argument("--equation", help="with --from-run: the equation's name")
    ratios.add_argument("--sample", help="with --from-run: the sample's name")
    ratios.add_argument("--economy", action="append", default=[], metavar="NAME:S_K:N[:S_H]",
                        help="an economy's rates as fractions (repeat, two or more)")
    ratios.add_argument("--reference", help="the economy the others are compared with "
                                            "(default: the first)")

    req = sub.add_parser("required-share", help="the share that turns an investment ratio "
                                                "into an income ratio, over a grid")
    req.add_argument("--income-ratio", type=float, nargs="+", required=True)
    req.add_argument("--investment-ratio", type=float, nargs="+", required=True)
    req.add_argument("--ngd-ratio", type=float, default=1.0,
                     help="(n + g + delta) of the poorer over the richer (default 1)")

    trans = sub.add_parser("transition", help="the path after a change in s_k, s_h or n, "
                                              "solved numerically, with half-lives")
    trans.add_argument("--alpha", type=float, required=True)
    trans.add_argument("--beta", type=float, default=0.0)
    trans.add_argument("--before", required=True, metavar="S_K,N[,S_H]",
                       help="the old rates as fractions")
    trans.add_argument("--after", required=True, metavar="S_K,N[,S_H]",
                       help="the new rates as fractions")
    trans.add_argument("--g", type=float, default=0.02, help="technology growth (default 0.02)")
    trans.add_argument("--delta", type=float, default=0.03, help="depreciation (default 0.03)")
    trans.add_argument("--years", type=float, default=200.0, help="horizon (default 200)")
    acc = sub.add_parser("accounting", help="development accounting: income per worker split "
                                            "into capital, schooling and productivity")
    acc.add_argument("file", type=Path, help="the accounting input as TOML (see the README)")
    acc.add_argument("--years", type=int, nargs="+", help="years to account for (default: the "
                                                          "input's years, else the last year)")
    acc.add_argument("--alpha", type=float, help="the capital share (default: the input's, "
                                                 "else 1/3)")
    out = [table, ratios, req, trans, acc]
    for p in (trans, acc):
        p.add_argument("--figure-formats", nargs="+", choices=("svg", "pdf"), default=["svg"],
                       help="figure files to write (default svg; the HTML page inlines SVG)")
    for p in out:
        p.add_argument("--out", type=Path, default=Path("reports"),
                       help="root folder for run folders (default ./reports)")
        p.add_argument("--quiet", action="store_true", help="print only the run folder's path")
    return out


def _numbers(text: str, key: str, sep: str) -> list[float]:
    try:
        return [float(x) for x in text.split(sep)]
    except ValueError:
        raise InputError(f"'{text}' holds something that is not a number", key) from None


def run_command(args: argparse.Namespace) -> int:
    from ..report.calibration import (
        accounting_page,
        printed_page,
        ratios_page,
        render_page_text,
        required_page,
        transition_page,
        write_page,
    )
    from ..report.text import terminal

    inputs: list[Path] = []
    if args.command == "from-table":
        from .inputs import load_printed_table, printed_table_from_options
        from .printed import implied_from_table

        if args.file is not None:
            if args.slope:
                raise InputError("give the table as a file or as --slope options, not both",
                                 "--slope")
            table = load_printed_table(args.file)
            inputs.append(args.file)
        elif not args.slope:
            raise InputError("give a table file or at least one --slope NAME=COEF,SE", "table")
        else:
            table = printed_table_from_options(
                args.form, args.capital, not args.unrestricted, args.slope, args.correlation,
                span=args.span, mean_ngd=args.mean_ngd, mean_investment=args.mean_investment,
                title=args.title, confidence=args.confidence, level=args.level)
        page = printed_page(implied_from_table(table))
    elif args.command == "ratios":
        from .steady import Economy, steady_state_ratios

        economies = []
        for text in args.economy:
            name, *rest = text.split(":")
            values = _numbers(":".join(rest), f"--economy {name}", ":") if rest else []
            if not name or len(values) not in (2, 3):
                raise InputError(f"'{text}' is not NAME:S_K:N or NAME:S_K:N:S_H", "--economy")
            economies.append(Economy(name, values[0], values[1],
                                     values[2] if len(values) == 3 else None))
        alpha, beta, g_delta = args.alpha, args.beta, args.g_delta
        if args.from_run is not None:
            from .steady import shares_from_run

            if args.alpha is not None:
                raise InputError("give --alpha or --from-run, not both", "--alpha")
            if not (args.equation and args.sample):
                raise InputError("--from-run needs --equation and --sample", "--from-run")
            alpha, beta, run_gd = shares_from_run(args.from_run, args.equation, args.sample)
            g_delta = run_gd if g_delta is None else g_delta
        elif alpha is None:
            raise InputError("give --alpha (and --beta), or --from-run", "--alpha")
        page = ratios_page(steady_state_ratios(alpha, beta, economies,
                                               0.05 if g_delta is None else g_delta,
                                               args.reference))
    elif args.command == "required-share":
        from .steady import required_share, required_share_grid

        pairs = [required_share(r, s, args.ngd_ratio) for r in args.income_ratio
                 for s in args.investment_ratio]
        grid = required_share_grid(args.income_ratio, args.investment_ratio, args.ngd_ratio)
        page = required_page(pairs, args.income_ratio, args.investment_ratio, grid,
                             args.ngd_ratio)
    elif args.command == "accounting":
        from ..data import read_table
        from .accounting import development_accounts
        from .inputs import load_accounting

        spec, data_path = load_accounting(args.file)
        if not data_path.is_file():
            raise InputError(f"data file '{data_path}' does not exist", "file")
        frame = read_table(data_path)
        c = spec.columns
        accounts = development_accounts(
            frame, id_column=spec.id, year=spec.year, output=c.output, capital=c.capital,
            workers=c.workers, human_index=c.human_index, schooling_years=c.schooling_years,
            labour_share=c.labour_share, alpha=args.alpha if args.alpha is not None else
            spec.alpha, years=args.years or spec.years or None,
            breaks=spec.schooling.breaks, returns=spec.schooling.returns)
        page = accounting_page(accounts, spec.title, ["svg", *args.figure_formats])
        inputs += [args.file, data_path]
    else:
        from .transition import Rates, transition

        def rates(text: str, key: str) -> Rates:
            v = _numbers(text, key, ",")
            if len(v) not in (2, 3):
                raise InputError(f"'{text}' is not S_K,N or S_K,N,S_H", key)
            return Rates(v[0], v[1], v[2] if len(v) == 3 else 0.0)

        page = transition_page(transition(args.alpha, args.beta,
                                          rates(args.before, "--before"),
                                          rates(args.after, "--after"), args.g, args.delta,
                                          args.years), ["svg", *args.figure_formats])
    formats = getattr(args, "figure_formats", ["svg"])
    folder = write_page(page, args.out, ["steadyfit", *sys.argv[1:]], inputs, formats)
    if args.quiet:
        print(folder)
        return 0
    width, colour = terminal()
    print(render_page_text(page, width, colour))
    print()
    print(f"run folder: {folder}")
    return 0
