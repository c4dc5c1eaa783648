"""The ``whitegauge`` command line.

Subcommands: ``run``, ``exact``, ``series``, ``study``, ``spec``, ``demo`` (see
``whitegauge SUBCOMMAND --help``). Exit codes: 0 success; 2 invalid input, with one line
``whitegauge: error: <key path>: <rule>`` on stderr and no traceback; 1 internal error
(set ``WHITEGAUGE_DEBUG=1`` to see its traceback); 130 after Ctrl-C and 143 after
SIGTERM (the workers stopped, finished blocks kept, one line saying how to resume).
Everything printed escapes control characters: names and paths are data.
"""

from __future__ import annotations

import argparse
import dataclasses
import json
import os
import signal
import sys
import threading
import traceback

from holonomy import SCHEMES, __version__, series_order_iv, study_schemes, study_spacings
from holonomy.experiment import (DEMO_GROUPS, MAX_SERIES_ORDER, MAX_WORKERS, BlockFailed,
                                 build_lattice, build_problem,
                                 Progress, SpecError, claim_folder, default_out,
                                 exact_results, format_exact_table, format_series_table,
                                 format_spec_keys, format_table, load_spec, printable,
                                 run_demo, run_spec, run_study, series_results, study_block)
from noise import ArgumentError

__all__ = ["build_parser", "main"]


class _Parser(argparse.ArgumentParser):
    """argparse with one-line errors (``whitegauge: error: ...``) and exit code 2."""

    def error(self, message: str):  # noqa: D401
        # "argument --workers: got ..." -> "--workers: got ..." (the key path first)
        raise _UsageError(message.removeprefix("argument "))


class _UsageError(Exception):
    pass


def _ascii(text: str) -> str:
    """A number's text: ASCII only (int() and float() also read other scripts' digits)."""
    if not text.isascii():
        raise ValueError(text)
    return text


def _out(text: str) -> str:
    if not text.strip():
        raise argparse.ArgumentTypeError(f"got {text!r}; expected a folder path")
    return text


def _workers(text: str) -> int:
    try:
        v = int(_ascii(text))
    except ValueError:
        v = 0
    if not 1 <= v <= MAX_WORKERS:
        raise argparse.ArgumentTypeError(f"got {text!r}; expected an integer from 1 to "
                                         f"{MAX_WORKERS}")
    return v


def _order(text: str) -> int:
    try:
        v = int(_ascii(text))
    except ValueError:
        v = None
    try:  # the series' own rule (holonomy.series_order_iv), as for the Python API
        return series_order_iv(v)
    except ArgumentError:
        raise argparse.ArgumentTypeError(f"got {text!r}; expected an integer from 0 to "
                                         f"{MAX_SERIES_ORDER}") from None


def _spacings(text: str) -> tuple[float, ...]:
    rule = "a comma-separated list of at least two distinct numbers > 0, like 0.5,0.25,0.125"
    try:
        vals = tuple(float(_ascii(t)) for t in text.split(","))
    except ValueError:
        raise argparse.ArgumentTypeError(f"got {text!r}; expected {rule}") from None
    try:  # the study's own rule (holonomy.study_spacings), as for the Python API
        return study_spacings(vals)
    except ArgumentError as exc:
        raise argparse.ArgumentTypeError(f"{exc.rule} ({rule})") from None


def _areas(text: str) -> tuple[float, ...]:
    from holonomy.experiment._decompactify import areas_iv

    rule = "a comma-separated list of distinct total areas > 0, like 2,4,8,16"
    try:
        return areas_iv(tuple(float(_ascii(t)) for t in text.split(",")))
    except (ValueError, TypeError):  # the API's own rule (areas_iv), as text
        raise argparse.ArgumentTypeError(f"got {text!r}; expected {rule}") from None


def _schemes(text: str) -> tuple[str, ...]:
    vals = tuple(t.strip() for t in text.split(",") if t.strip())
    if not vals or any(v not in SCHEMES for v in vals) or len(set(vals)) != len(vals):
        raise argparse.ArgumentTypeError(
            f"got {text!r}; expected a comma-separated list of distinct names "
            f"from {', '.join(SCHEMES)}")
    return vals


_EPILOG = ("Exit codes: 0 success; 2 invalid input (one line on stderr naming the key "
           "or option and what is expected; nothing computed is lost); 1 internal error "
           "(set WHITEGAUGE_DEBUG=1 for the traceback); 130 interrupted by Ctrl-C, 143 "
           "terminated by SIGTERM (finished blocks kept; one line says how to resume).")


_FRESH = ("discard the whitegauge files already in DIR (its store, results, report) "
          "and start over; nothing else in DIR is touched. Without it, a DIR holding "
          "another command's or spec's files is refused, and the stored blocks of the "
          "same spec are reused (default: reuse)")


def _sub(sub, name: str, summary: str, description: str):
    return sub.add_parser(name, help=summary, description=description, epilog=_EPILOG)


def _spec_arg(p, purpose: str) -> None:
    p.add_argument("spec", metavar="SPEC", help=f"the experiment spec, a TOML file ({purpose}; "
                   "whitegauge spec --keys lists the keys)")
    _set_arg(p)


def _set_arg(p) -> None:
    p.add_argument("--set", action="append", default=[], metavar="KEY=VALUE",
                   dest="overrides",
                   help="set a spec key, repeatable: a key path as in whitegauge spec "
                   "--keys (run.samples=100000, field.scheme=gauss, "
                   "loops[0].circle.radius=0.5) and a TOML value (a bare word is a "
                   "string); validated exactly like the file and recorded in the stored "
                   "spec and its spec_sha256 (default: none)")


def _json_arg(p) -> None:
    p.add_argument("--json", action="store_true",
                   help="print the results object as JSON on stdout instead of the table "
                   "(no start or end line on stderr)")


def _folder_args(p) -> None:
    """``--fresh``, ``--json`` and ``--quiet`` of the commands that own an output folder."""
    p.add_argument("--fresh", action="store_true", help=_FRESH)
    _json_arg(p)
    p.add_argument("--quiet", action="store_true",
                   help="print nothing but errors: no progress bar, table or start/end line")


def _workers_arg(p, default: str) -> None:
    p.add_argument("--workers", type=_workers, default=1 if default == "1" else None,
                   metavar="N", help=f"worker processes, an integer from 1 to "
                   f"{MAX_WORKERS} (default "
                   f"{default}); the numbers do not depend on it")


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(
        prog="whitegauge",
        description="Stochastic holonomy experiments in two-dimensional gauge theory: "
        "Wilson loops of white-noise gauge fields in axial gauge, with error bars, exact "
        "references and perturbative series, from TOML spec files. Every number printed "
        "says what it is (estimate, exact, series, formal) and carries its error.",
        epilog=_EPILOG,
    )
    parser.add_argument("--version", action="version", version=f"whitegauge {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser,
                                title="commands (whitegauge COMMAND --help for each)")

    p = _sub(sub, "run", "run a spec: Monte Carlo Wilson loops with error bars",
             "Sample the spec's loops with its scheme and print, per loop, the estimate "
             "with its standard error, the exact value of what the scheme samples (with "
             "z = (estimate - exact) / stderr) and the exact value of the loop as "
             "specified. Writes results.json, results.csv and the run store run.sqlite "
             "into DIR. Needs [run] samples and seed in the spec.")
    _spec_arg(p, "run needs [run] samples and seed")
    p.add_argument("--out", type=_out, metavar="DIR", help="output folder, created if missing "
                   "(default: whitegauge-<name> in the current folder, <name> the spec's "
                   "name with every character other than a letter, digit, '.', '_', '+' "
                   "or '-' replaced by '-')")
    _workers_arg(p, "1")
    p.add_argument("--resume", action="store_true",
                   help="keep the finished blocks of an interrupted run of the same spec "
                   "in DIR and compute only the missing ones (the numbers are bitwise the "
                   "same); a rerun into DIR does this by default too")
    _folder_args(p)

    p = _sub(sub, "exact", "exact values of the spec's loops where known",
             "Print, per loop, the exact value of what the spec's scheme samples and the "
             "exact continuum value of the loop as specified, with the method used, or "
             "— and the reason where no exact route applies. No sampling: [run] is not "
             "needed, and a density of changing sign is evaluated formally.")
    _spec_arg(p, "[run] is not needed")
    _json_arg(p)

    p = _sub(sub, "series", "perturbative coefficients c_0..c_M per loop",
             "Print the coefficients c_0..c_M of E[W](lambda) = sum_m c_m lambda^m per "
             "loop, of the quantity field.scheme names: heat, the continuum series of "
             "the loop as snapped (exact for lattice loops); linear and gauss, their "
             "Wick series on the spec's grid; wilson, the weak-coupling expansion of its "
             "lattice value (asymptotic; U(1), and SU(2) simple loops). Beside them the "
             "continuum series of the loop as specified. Floats and, where available, "
             "exact rationals; a signed density gives formal series. The command has a "
             "time budget shared by its loops (WHITEGAUGE_SERIES_BUDGET seconds, default "
             "60); a loop over budget gets — and a note, a warning on stderr, and exit "
             "code 1 if no loop got any coefficient.")
    _spec_arg(p, "[run] is not needed")
    p.add_argument("--order", type=_order, required=True, metavar="M",
                   help="the highest order M, an integer from 0 to 20 (required)")
    _json_arg(p)

    p = _sub(sub, "decompactify", "a closed-surface spec's loops on spheres of growing "
             "area against the plane: the two orders of limits",
             "For a sphere spec ([surface] kind sphere, or closed with genus 0): per loop "
             "and per total area T of --areas, the exact value on the sphere, its "
             "zero-instanton sector and that sector's Taylor coefficients c_0..c_M in the "
             "coupling (the whole small-coupling series: the other sectors are "
             "O(exp(-const/lambda))); the plane's exact value and coefficients; and the "
             "coefficients as T -> infinity (extrapolated in 1/T, with an error) with "
             "their differences from the plane's. With --out, a plot of the values "
             "against the coupling for each T, the plane and the zero-instanton curves.")
    _spec_arg(p, "a sphere: [surface] kind sphere; surface.area is replaced by --areas")
    p.add_argument("--areas", type=_areas, required=True, metavar="T1,T2,...",
                   help="total areas, each larger than every loop's drawn measure "
                   "(required)")
    p.add_argument("--order", type=_order, required=True, metavar="M",
                   help="the highest order M, an integer from 0 to 20 (required)")
    p.add_argument("--out", type=_out, metavar="DIR", help="folder for decompactify.png and "
                   "decompactify.json (default: no files)")
    p.add_argument("--fresh", action="store_true", help=_FRESH)
    _json_arg(p)

    p = _sub(sub, "study", "the loops at several spacings and schemes, "
             "on one coupled noise field; convergence rates",
             "Run the spec's loops at every spacing and scheme on one coupled noise field "
             "(the noise at a coarse spacing is the sum of the noise at the finer ones), "
             "report per row the error against the scheme's own exact lattice value and "
             "against the continuum value of the loop as specified, and fit the rate p of "
             "the scheme error C h^p. Writes study.json, study.csv, convergence.png and "
             "the store study.sqlite into DIR. The spec's field.spacing and "
             "field.scheme are replaced by --spacings and --schemes.")
    _spec_arg(p, "study needs [run] samples and seed")
    p.add_argument("--spacings", type=_spacings, required=True, metavar="H1,H2,...",
                   help="at least two spacings, the coarsest divided by powers of 2, "
                   "e.g. 0.5,0.25,0.125 (required)")
    p.add_argument("--schemes", type=_schemes, default=study_schemes(), metavar="S1,S2,...",
                   help=f"comma-separated registered schemes from {', '.join(SCHEMES)} "
                   f"(default {','.join(study_schemes())}; a scheme refuses the groups it "
                   "does not support, e.g. wilson needs U(1) or SU(2))")
    p.add_argument("--out", type=_out, metavar="DIR", help="output folder, created if missing "
                   "(default: whitegauge-<name>-study in the current folder)")
    _workers_arg(p, "1")
    p.add_argument("--resume", action="store_true",
                   help="keep the finished blocks of an interrupted study of the same spec "
                   "in DIR; a rerun into DIR does this by default too")
    _folder_args(p)

    p = _sub(sub, "spec", "the spec reference (--keys) or a check of a spec file (--check)",
             "With --keys, print every spec key with its meaning, allowed values and "
             "default (the reference generated from the parser's own definition). With "
             "--check FILE, validate the file (and any --set) for the given purpose and "
             "print a one-line summary, or the error and exit code 2; with --print, "
             "print the spec text as it would be stored.")
    what = p.add_mutually_exclusive_group(required=True)
    what.add_argument("--keys", action="store_true",
                      help="print the spec reference: key paths, meanings and defaults")
    what.add_argument("--check", metavar="FILE",
                      help="validate the spec file FILE (exit 0 if valid, 2 if not); "
                      "one of --keys and --check is required (no default)")
    p.add_argument("--purpose", choices=("run", "study", "exact", "series"), default="run",
                   help="what the spec is checked for: run and study need [run] samples "
                   "and seed and a density >= 0 (default run)")
    _set_arg(p)
    p.add_argument("--print", action="store_true", dest="show",
                   help="with --check: print the spec text as stored (with the --set "
                   "values) instead of the summary (default: the summary)")

    p = _sub(sub, "demo", "a built-in survey: report.md, plots, results.json",
             "Run a built-in survey (SU(2) and U(3); a rectangle, a doubly wound circle "
             "and a figure eight; the heat, gauss, linear and, where it applies, wilson "
             "schemes; the perturbative series of the rectangle) and write report.md, "
             "PNG plots, results.json, the specs in specs/ and their runs in runs/. "
             "About a minute on two cores.")
    p.add_argument("--out", type=_out, metavar="DIR", default="whitegauge-demo",
                   help="output folder, created if missing (default: whitegauge-demo)")
    _workers_arg(p, "the number of cores, at most 2")
    _folder_args(p)
    return parser


def _progress(args, start: str | None = None):
    """The command's one progress bar (a no-op unless stderr is a terminal and neither
    --quiet nor --json is given); ``start``, the command's start line, is printed when
    its first run starts, after every check (a refusal stays the only line)."""
    header = printable(f"whitegauge {args.command}: {start}") \
        if start is not None and _talk(args) else None
    return Progress(enabled=_talk(args) and sys.stderr.isatty(), header=header)


def _talk(args) -> bool:
    """Whether to print the start and end lines on stderr (not with --quiet or --json:
    then stderr carries errors only)."""
    return not getattr(args, "quiet", False) and not getattr(args, "json", False)


def _say(args, text: str) -> None:
    if _talk(args):
        print(printable(f"whitegauge {args.command}: {text}"), file=sys.stderr, flush=True)


def _blocks(spec) -> str:
    n = -(-spec.samples // spec.block)
    return (f"{spec.samples} samples in {n} block{'s' * (n != 1)} of {spec.block} "
            f"(seed {spec.seed})")


def _workers_text(workers) -> str:
    return "inline" if not workers or workers <= 1 else f"on {workers} worker processes"


def _cmd_run(args) -> int:
    spec = load_spec(args.spec, purpose="run", overrides=args.overrides)
    out = args.out or default_out(spec.name)
    args.resume_hint = (out, "run.sqlite")
    bar = _progress(args, f"{spec.name}: {spec.family}({spec.n}), {spec.scheme} scheme, "
                    f"spacing {spec.spacing:g}, {len(spec.loops)} loop(s), {_blocks(spec)}, "
                    f"{_workers_text(args.workers)}; output in {out}/")
    try:
        outcome = run_spec(spec, out=out, workers=args.workers, resume=args.resume,
                           fresh=args.fresh, progress=bar)
    finally:
        bar.close()
    if args.json:
        print(json.dumps(outcome.results, indent=2))
    elif not args.quiet:
        print(f"{printable(spec.name)}: {spec.family}({spec.n}), {spec.scheme} scheme, spacing "
              f"{spec.spacing:g}, {spec.samples} samples (seed {spec.seed})")
        print(format_table(outcome.results))
    for warning in outcome.results.get("warnings", []):  # always: stderr carries them
        print(printable(f"whitegauge run: warning: {warning}"), file=sys.stderr, flush=True)
    _say(args, f"wrote {os.path.join(out, 'results.json')}, results.csv and the run "
         f"store run.sqlite ({outcome.stats.computed} blocks computed, "
         f"{outcome.stats.reused} reused, {outcome.stats.seconds:.1f} s)")
    return 0


def _cmd_exact(args) -> int:
    spec = load_spec(args.spec, purpose="exact", overrides=args.overrides)
    obj = exact_results(spec)
    if args.json:
        print(json.dumps(obj, indent=2))
    else:
        print(format_exact_table(obj))
    return 0


def _cmd_series(args) -> int:
    from holonomy.experiment._commands import budget_limited

    spec = load_spec(args.spec, purpose="series", overrides=args.overrides)
    bar = Progress(enabled=_talk(args) and sys.stderr.isatty(), unit="part")
    try:
        obj = series_results(spec, args.order, progress=bar)
    finally:
        bar.close()
    if args.json:
        print(json.dumps(obj, indent=2))
    else:
        print(format_series_table(obj))
    late = budget_limited(obj)
    if late:
        print(f"whitegauge series: warning: no coefficients for {', '.join(late)}: the "
              "time budget (WHITEGAUGE_SERIES_BUDGET seconds per loop) ran out; try a "
              "lower --order or a larger budget", file=sys.stderr)
        if all(r.get("coefficients") is None for r in obj["results"]):
            return 1
    return 0


def _cmd_study(args) -> int:
    spec = load_spec(args.spec, purpose="study", overrides=args.overrides)
    out = args.out or default_out(spec.name, "-study")
    args.resume_hint = (out, "study.sqlite")
    block, note = study_block(spec)
    bar = _progress(args, f"{spec.name}: {spec.family}({spec.n}), schemes "
                    f"{', '.join(args.schemes)} at spacings "
                    f"{', '.join(f'{h:g}' for h in args.spacings)} on one noise field, "
                    f"{_blocks(dataclasses.replace(spec, block=block))}"
                    f"{f' ({note})' if note else ''}, {_workers_text(args.workers)}; "
                    f"output in {out}/")
    try:
        outcome = run_study(spec, spacings=args.spacings, schemes=args.schemes, out=out,
                            workers=args.workers, resume=args.resume, fresh=args.fresh,
                            progress=bar)
    finally:
        bar.close()
    if args.json:
        print(json.dumps(outcome.results, indent=2))
    elif not args.quiet:
        print(outcome.table)
    _say(args, f"wrote {os.path.join(out, 'study.json')}, study.csv, convergence.png and "
         "the run store study.sqlite")
    return 0


def _cmd_spec(args) -> int:
    if args.keys:
        if args.overrides or args.show:
            raise _UsageError("--set and --print apply to --check FILE only")
        print(format_spec_keys())
        return 0
    spec = load_spec(args.check, purpose=args.purpose, overrides=args.overrides)
    # the problem the command would build (loops snapped, group, scheme, reference line):
    # what every command refuses, --check refuses too
    if args.purpose in ("run", "study"):
        build_problem(spec, formal=spec.signed)
    else:
        build_lattice(spec)
    if args.show:
        print(spec.text, end="" if spec.text.endswith("\n") else "\n")
        return 0
    run = "" if spec.samples is None else f", {spec.samples} samples (seed {spec.seed})"
    print(printable(f"{args.check}: a valid spec for {args.purpose}: {spec.name}, "
                    f"{spec.family}({spec.n}) {spec.metric}, {spec.scheme} scheme, spacing "
                    f"{spec.spacing:g}, {len(spec.loops)} loop(s){run}; spec_sha256 "
                    f"{spec.sha256}"))
    return 0


def _cmd_demo(args) -> int:
    runs = sum(len(g[3]) for g in DEMO_GROUPS)
    bar = _progress(args, f"{runs} runs ({', '.join(f'{f}({n})' for f, n, _, _ in DEMO_GROUPS)}; "
                    f"3 loops; schemes heat, gauss, linear and wilson where it applies), "
                    f"{_workers_text(args.workers or 2)}; output in {args.out}/")
    try:
        outcome = run_demo(out=args.out, workers=args.workers, progress=bar,
                           fresh=args.fresh)
    finally:
        bar.close()
    if args.json:
        print(json.dumps(outcome.results, indent=2))
    elif not args.quiet:
        print(outcome.table)
    _say(args, f"wrote {os.path.join(args.out, 'report.md')}, results.json, "
         f"{len(outcome.plots)} plots, the specs in specs/ and their runs in runs/")
    return 0


def _cmd_decompactify(args) -> int:
    from holonomy.experiment._decompactify import (decompactify_results,
                                                   format_decompactify_table,
                                                   plot_decompactify)

    spec = load_spec(args.spec, purpose="exact", overrides=args.overrides)
    obj = decompactify_results(spec, args.areas, args.order)  # checks before any work
    if args.out:  # the folder belongs to this command and job, as for run and study
        job = f"{spec.sha256}:decompactify:{list(args.areas)}:{args.order}"
        with claim_folder(args.out, command="decompactify", identity=job, name=spec.name,
                          fresh=args.fresh):
            plot_decompactify(spec, obj, args.out)
            with open(os.path.join(args.out, "decompactify.json"), "w") as fh:
                json.dump(obj, fh, indent=2)
    if args.json:
        print(json.dumps(obj, indent=2))
    else:
        print(format_decompactify_table(obj))
    return 0


_COMMANDS = {"run": _cmd_run, "exact": _cmd_exact, "series": _cmd_series,
             "study": _cmd_study, "spec": _cmd_spec, "demo": _cmd_demo,
             "decompactify": _cmd_decompactify}


class _Terminated(KeyboardInterrupt):
    """SIGTERM, raised in the main thread so that the same cleanup as Ctrl-C runs."""


def _on_sigterm(signum, frame):
    raise _Terminated()


def _line(text: str) -> None:
    """One line on stderr, control characters escaped (names and paths are data)."""
    print(printable(" ".join(text.split("\n"))), file=sys.stderr)


def _interrupted(args, exc: KeyboardInterrupt) -> int:
    what, code = ("terminated", 143) if isinstance(exc, _Terminated) else ("interrupted", 130)
    hint = getattr(args, "resume_hint", None)
    if hint is not None:
        out, store = hint
        _line(f"whitegauge: {what}; the finished blocks are kept in "
             f"{os.path.join(out, store)}: rerun the same command with --resume to "
             "continue")
    else:
        _line(f"whitegauge: {what}; nothing was kept: rerun the command to start again")
    return code


def main(argv: list[str] | None = None) -> int:
    """Entry point; returns the exit code (0 ok, 2 invalid input, 1 internal error,
    130 interrupted by Ctrl-C, 143 terminated by SIGTERM)."""
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
    except _UsageError as exc:
        _line(f"whitegauge: error: {exc}")
        return 2
    except SystemExit as exc:  # --help, --version
        return int(exc.code or 0)
    if args.command is None:
        parser.print_help()
        return 0
    if getattr(args, "resume", False) and getattr(args, "fresh", False):
        _line("whitegauge: error: --fresh: not allowed with --resume (--resume keeps the "
             "stored blocks, --fresh discards them)")
        return 2
    previous = None
    if threading.current_thread() is threading.main_thread():
        previous = signal.signal(signal.SIGTERM, _on_sigterm)
    try:
        return _COMMANDS[args.command](args)
    except _UsageError as exc:
        _line(f"whitegauge: error: {exc}")
        return 2
    except SpecError as exc:
        _line(f"whitegauge: error: {exc}")
        return 2
    except BlockFailed as exc:  # a block raised twice: exit 1, finished blocks kept
        _line(f"whitegauge: run stopped: {exc}")
        return 1
    except KeyboardInterrupt as exc:
        return _interrupted(args, exc)
    except BrokenPipeError:
        return 1
    except Exception as exc:  # noqa: BLE001  (exit 1, a short line, no traceback)
        if os.environ.get("WHITEGAUGE_DEBUG"):
            traceback.print_exc()
        msg = " ".join(str(exc).split())
        _line(f"whitegauge: internal error: {type(exc).__name__}: {msg} (set "
             "WHITEGAUGE_DEBUG=1 for the traceback)")
        return 1
    finally:
        if previous is not None:
            signal.signal(signal.SIGTERM, previous)


if __name__ == "__main__":
    sys.exit(main())
