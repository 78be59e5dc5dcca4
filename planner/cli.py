"""Command line: a thin layer over the library.

Results go to stdout (a table, or one JSON object with ``--json``); diagnostics
and progress go to stderr. Exit codes: 0 every requirement met, 1 the design
falls short of a requirement (a verdict, not a crash), 2 bad input or usage,
3 an internal error (a bug: please report it with the project file).

Heavy modules (numpy, scipy, networkx, pint, reportlab) are imported inside the
commands, so ``planner --help`` stays quick.
"""

from __future__ import annotations

import argparse
import json
import math
import re
import sys

from . import __version__

EXIT_OK, EXIT_SHORT, EXIT_INPUT, EXIT_INTERNAL = 0, 1, 2, 3


#: An option value that starts with a minus sign: a negative number (with an exponent or
#: a unit, '-1e11', '-5 V'), or a non-finite one; argparse alone takes '-1e11' for an option.
_NEGATIVE_VALUE = re.compile(r"^-(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?(?:\s.*)?$|^-(?:inf|infinity|nan)$", re.I)


class _Parser(argparse.ArgumentParser):
    """argparse that reports usage errors as one line with exit code 2 and takes negative values."""

    def __init__(self, *args, **kwargs):
        super().__init__(*args, **kwargs)
        self._negative_number_matcher = _NEGATIVE_VALUE

    def error(self, message):
        m = re.match(r"argument (-[-\w]+)(?:/[-\w]+)*: expected one argument", message)
        if m:  # a value that looks like an option: say how to give it
            message += f"; a value starting with '-' is written {m.group(1)}=VALUE, e.g. {m.group(1)}=-1e11"
        self.exit(EXIT_INPUT, f"{self.prog}: {message} (see '{self.prog} --help')\n")


def _finite(obj):
    """JSON-safe copy: numpy scalars to floats, non-finite floats to None."""
    if isinstance(obj, dict):
        return {str(k): _finite(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_finite(v) for v in obj]
    if hasattr(obj, "tolist") and not isinstance(obj, (str, bytes)):
        return _finite(obj.tolist())
    if isinstance(obj, float):
        return obj if math.isfinite(obj) else None
    return obj


def _emit(args, result: dict, table: str | None) -> None:
    if args.json:
        sys.stdout.write(json.dumps(_finite(result), indent=2, allow_nan=False) + "\n")
    elif table is not None:
        sys.stdout.write(table.rstrip("\n") + "\n")


def _progress(args):
    """A progress printer on stderr, silent with --quiet or when stderr is no terminal."""
    if getattr(args, "quiet", False) or not sys.stderr.isatty():
        return None

    def show(message: str) -> None:
        sys.stderr.write(f"\r\x1b[K{message}")
        sys.stderr.flush()

    return show


def _end_progress(show) -> None:
    if show is not None:
        sys.stderr.write("\r\x1b[K")
        sys.stderr.flush()


def _load(args):
    from .project import load, same_meter

    spec = load(args.project)
    same_meter(spec)  # ranges and a network in one file: the same meter, or say which to remove
    return spec


def _design(spec, position=None):
    """The command's one Design (sized where the file asks, its graph checked)."""
    from .design import build
    from .ohms import zeroed_design

    return zeroed_design(build(spec), position)  # zero adjusters set at the nominal battery (docs/ohms.md)


def _quantity(text: str, dimension: str, option: str, check: str | None = None) -> float:
    """A command-line quantity: a number with a unit, or a bare number in SI units (degC for a
    temperature), checked as the project file checks the same value (:mod:`planner.values`)."""
    from .errors import UsageError
    from .units import QuantityError
    from .values import option_quantity

    try:
        return option_quantity(text, dimension, option, check)
    except QuantityError as exc:
        raise UsageError(" ".join(exc.message.split())) from None


def _options(args) -> None:
    """Check and convert the options every command shares, with the project file's limits and
    wording (:mod:`planner.values`), before the file is read: whole numbers to int, quantities
    to SI floats (``args.volts`` [V], ``args.amps`` [A], ``args.source_impedance`` [ohm],
    ``args.temperature`` [K])."""
    from .errors import UsageError
    from .project.limits import MAX_SAMPLES, MAX_SEED
    from .units import QuantityError
    from .values import ambient_temperature, calendar_date, option_whole, sine_rms

    try:
        if getattr(args, "samples", None) is not None:
            args.samples = option_whole(args.samples, "--samples", 2, MAX_SAMPLES, "2000")
        if getattr(args, "seed", None) is not None:
            args.seed = option_whole(args.seed, "--seed", 0, MAX_SEED, "1")
        if getattr(args, "max_candidates", None) is not None:
            args.max_candidates = option_whole(args.max_candidates, "--max-candidates", 10, None, "2000")
        waveform = getattr(args, "waveform", None) or "dc"
        for option, kind in (("volts", "voltage"), ("amps", "current")):
            text = getattr(args, option, None)
            if text is not None:
                setattr(args, option, sine_rms(_quantity(text, kind, f"--{option}", "nonzero"), waveform, f"--{option}"))
        if getattr(args, "ohms", None) is not None:
            # 0 ohm is a short across an ohms range (apply: the zero check); netlist asks for more itself
            args.ohms = _quantity(args.ohms, "resistance", "--ohms", "nonneg")
        if getattr(args, "source_impedance", None) is not None:
            args.source_impedance = _quantity(args.source_impedance, "resistance", "--source-impedance", "nonneg")
        if getattr(args, "date", None) is not None:
            args.date = calendar_date(args.date, "--date")
        if getattr(args, "temperature", None) is not None:
            args.temperature = ambient_temperature(
                _quantity(args.temperature, "temperature", "--temperature", "pos"), "--temperature")
    except QuantityError as exc:
        raise UsageError(" ".join(exc.message.split())) from None


def _check_output(path: str, project: str, args=None) -> None:
    """Refuse an output early (before any computing): see :func:`planner.fsio.check_target`.

    ``-`` is standard output (written with :func:`planner.fsio.emit`); it cannot
    share stdout with ``--json``. The writer checks the file again when it writes.
    """
    from .errors import UsageError
    from .fsio import STDOUT, check_target

    if path == STDOUT:
        if args is not None and getattr(args, "json", False):
            raise UsageError("--json and an output to standard output ('-') cannot share stdout; "
                             "write the output to a file, or drop --json")
        return
    check_target(path, protect=[project])


def _cautions_tail(result: dict) -> str:
    cautions = result.get("cautions") or []
    if not cautions:
        return ""
    return "\n" + "\n".join(f"CAUTION: {c}" for c in cautions) + "\n"


# --- subcommands ----------------------------------------------------------------------


def cmd_size(args) -> int:
    if args.retrim:
        return cmd_retrim(args)
    if args.output:
        _check_output(args.output, args.project, args)
    spec = _load(args)  # before the heavy imports: bad input is answered sooner
    from .fsio import emit
    from .sizing import format_sizing_table, network_yaml, size, sizing_json

    from .findings import finding_lines, sizing_findings

    if spec.network is not None and (spec.voltage is not None or spec.current is not None):
        # both in one file (the loader has checked that they describe the same meter)
        print(f"planner: note: {args.project} also gives an explicit network; 'size' sizes the ranges anew, "
              "the other commands analyse the network as it is", file=sys.stderr)
    sizing = size(spec)  # the sizer alone: `size` reports the sizing, it needs no solved design
    result = sizing_json(sizing, spec)
    result["findings"] = sizing_findings(spec, sizing)
    if args.output:
        if emit(args.output, network_yaml(spec, sizing), protect=[args.project]):
            print(f"wrote {args.output}", file=sys.stderr)
        else:  # '-': stdout carries the network alone
            return EXIT_OK if result.get("requirements_met", True) else EXIT_SHORT
    _emit(args, result, format_sizing_table(sizing) + _lines_tail(finding_lines(result["findings"])))
    return EXIT_OK if result.get("requirements_met", True) else EXIT_SHORT


def _lines_tail(lines: list) -> str:
    """Extra report lines after a table (empty when there are none)."""
    return "\n".join(lines) + "\n" if lines else ""


def cmd_check(args) -> int:
    spec = _load(args)  # before the heavy imports: bad input is answered sooner
    from .accuracy import check, format_check

    design = _design(spec)
    show = _progress(args)
    try:
        result = check(design, samples=args.samples, seed=args.seed, source_impedance_ohm=args.source_impedance,
                       progress=show).json
    finally:
        _end_progress(show)
    _add_cautions(spec, result)
    from .findings import finding_lines

    _emit(args, result, format_check(result) + _lines_tail(finding_lines(result.get("findings", [])))
          + _cautions_tail(result))
    return EXIT_OK if result.get("requirements_met", True) else EXIT_SHORT


def _add_cautions(spec, result: dict) -> None:
    if "cautions" in result:
        return
    from .faults import cautions_for

    result["cautions"] = cautions_for(spec)


def cmd_faults(args) -> int:
    spec = _load(args)  # before the heavy imports: bad input is answered sooner
    from .faults import faults_project, format_faults

    show = _progress(args)
    tick = None if show is None else (lambda done, total, label: show(f"faults: {done}/{total} {label}"))
    try:
        result = faults_project(_design(spec), position=args.position, only_failing=args.only_failing, progress=tick,
                                parallel=None)
    finally:
        _end_progress(show)
    _add_cautions(spec, result)
    table = format_faults(result)
    if result.get("cautions") and "CAUTION" not in table:
        table += _cautions_tail(result)
    _emit(args, result, table)
    return EXIT_OK if result.get("requirements_met", True) else EXIT_SHORT


def cmd_apply(args) -> int:
    spec = _load(args)  # before the heavy imports: bad input is answered sooner
    from .stress import apply_stimulus, format_apply

    volts, amps = args.volts, args.amps
    r_src = 0.0 if args.source_impedance is None else args.source_impedance
    ohms = args.ohms  # converted with every command's options [ohm]
    if ohms is not None:  # a resistor across the input: 0 V behind R_x, the battery inside drives it
        from .errors import UsageError

        if args.source_impedance is not None:
            raise UsageError("--ohms takes no --source-impedance: the resistor is the whole external circuit")
        volts, r_src = 0.0, ohms
    design = _design(spec, args.position)
    result = apply_stimulus(design, args.position, volts=volts, amps=amps, r_source_ohm=r_src,
                            temperature_k=args.temperature, waveform=args.waveform)
    if ohms is not None:
        from .engine import Engine
        from .ohms import apply_reading

        result["ohms"] = apply_reading(Engine(design), args.position, ohms, temperature_k=args.temperature)
    text = format_apply(result)
    if "ohms" in result:
        o = result["ohms"]
        text += "" if text.endswith("\n") else "\n"
        text += (f"reads {_ohm_text(o['reading_ohm'])} for {_ohm_text(o['applied_ohm'])} (deflection "
                 f"{o['deflection']:.4f}, centre {_ohm_text(o['center_ohm'])}, battery {o['battery_v']:g} V, zeroed)\n")
    _emit(args, result, text)
    return EXIT_SHORT if result.get("verdict") in ("overstress", "hazard") else EXIT_OK


def _ohm_text(x: float) -> str:
    from .units import format_si

    return "infinity" if x == float("inf") else format_si(x, "ohm", 4)


def cmd_dossier(args) -> int:
    from .fsio import check_targets

    out = args.output or _default_pdf(args.project)
    inputs = [args.project] + ([args.readings] if args.readings else [])
    check_targets([out] + ([args.bom] if args.bom else []), protect=inputs)
    spec = _load(args)  # before the heavy imports: bad input is answered sooner
    from .dossier import build_dossier

    design = _design(spec)
    diagnosis = None
    if args.readings:  # bad readings are bad input: exit 2 before anything is written
        from .diagnose import diagnose, diagnosis_json

        diagnosis = diagnosis_json(diagnose(spec, args.readings))
    plate = lambda: _dossier_plate(design)  # noqa: E731 - made by whichever core is free first
    show = _progress(args)
    try:
        path = build_dossier(design, out, bom_path=args.bom, date=args.date, samples=args.samples, progress=show,
                             plate=plate, diagnosis=diagnosis, readings=args.readings, protect=inputs[1:])
    finally:
        _end_progress(show)
    for written in [path] + ([args.bom] if args.bom else []):  # every file written, one line each
        print(f"wrote {written}", file=sys.stderr)
    return EXIT_OK


def _dossier_plate(design):
    """The scale plate for the dossier, or the error text when it cannot be laid out (shown in its section)."""
    from .errors import PlannerError

    try:
        return _plate(design)
    except PlannerError as exc:
        return exc.one_line()


def _plate(design):
    """The scale plate of ``planner scale`` and the dossier: every scale, the ohms arcs from the zeroed response."""
    from .engine import Engine
    from .ohms import scale_definitions
    from .scale import scale_project

    engine = Engine(design)
    return scale_project(design, engine=engine, defs=scale_definitions(engine))


def cmd_protect(args) -> int:
    if args.output:
        _check_output(args.output, args.project, args)
    spec = _load(args)  # before the heavy imports: bad input is answered sooner
    from .protect import format_protect, protect_project, write_protected

    share = 0.25
    if args.share is not None:
        share = _quantity(args.share, "fraction", "--share")
        if not 0.0 < share <= 1.0:
            from .errors import UsageError

            raise UsageError(f"--share: {args.share!r} must lie between 0 and 1 (a share of the class index)")
    design = _design(spec)
    show = _progress(args)
    try:
        result = protect_project(design, share=share, seed=args.seed, max_candidates=args.max_candidates, progress=show)
    finally:
        _end_progress(show)
    if args.output:
        written = write_protected(design, result, args.output)
        if written is None and args.output == "-":  # stdout carries a project: the one given, unchanged
            sys.stdout.write("# planner protect: nothing protects better than this project as given; it is "
                             "unchanged\n" + (spec.text or ""))
            print("nothing protects better than the project as given: it is written unchanged", file=sys.stderr)
            return EXIT_OK if result.get("requirements_met", True) else EXIT_SHORT
        if written is None:
            print("nothing protects better than the project as given: nothing written", file=sys.stderr)
        elif args.output == "-":  # stdout carries the project alone
            return EXIT_OK if result.get("requirements_met", True) else EXIT_SHORT
        else:
            print(f"wrote {args.output}", file=sys.stderr)
    _emit(args, result, format_protect(result))
    return EXIT_OK if result.get("requirements_met", True) else EXIT_SHORT


def cmd_fit_diode(args) -> int:
    from .diodefit import fit, fit_json, format_fit, read_points

    result = fit(read_points(args.points), name=args.name, temperature_k=args.temperature, xti=args.xti)
    _emit(args, fit_json(result), format_fit(result))
    if not result.usable:  # a verdict: the points are not a diode's; no model to paste
        more = len(result.problems) - 1
        tail = f" ({more} more reason{'s' if more > 1 else ''} in the report)" if more else ""
        print(f"planner: {args.points}: the fit is not usable: {result.problems[0]}{tail}", file=sys.stderr)
        return EXIT_SHORT
    return EXIT_OK


def cmd_scale(args) -> int:
    import os

    from .fsio import check_targets

    out = args.output or os.path.splitext(os.path.basename(args.project))[0] + "-scale.pdf"
    check_targets([out] + ([args.svg] if args.svg else []), protect=[args.project])
    spec = _load(args)  # before the heavy imports: bad input is answered sooner
    from . import __version__
    from .fsio import write_all
    from .scale import format_scale, plate_pdf, plate_svg, scale_json

    design = _design(spec)
    result = _plate(design)
    title = f"{spec.title} \u2013 scale plate"
    items = [(out, plate_pdf(result.plate, title=title, creator=f"planner {__version__}"))]
    if args.svg:
        items.append((args.svg, plate_svg(result.plate, title=title)))
    write_all(items, protect=[args.project])
    for path, _ in items:
        print(f"wrote {path}", file=sys.stderr)
    _emit(args, scale_json(result), format_scale(result))
    return EXIT_OK


def _default_pdf(project: str) -> str:
    import os

    stem, _ = os.path.splitext(os.path.basename(project))
    return f"{stem}-dossier.pdf"


# --- parser ---------------------------------------------------------------------------


def build_parser() -> argparse.ArgumentParser:
    p = _Parser(prog="planner", description=(
        "Plans the analog front end of multi-range moving-coil instruments: sizes multipliers and "
        "shunts from real parts, proves accuracy and misrange survival, writes a PDF dossier."),
        epilog="Exit codes: 0 requirements met, 1 the design falls short, 2 bad input or usage, 3 internal error.")
    p.add_argument("--version", action="version", version=f"planner {__version__}")
    sub = p.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)

    def common(sp, json_flag=True):
        sp.add_argument("project", metavar="FILE", help="project file (YAML)")
        if json_flag:
            sp.add_argument("--json", action="store_true", help="one JSON object on stdout, SI units")
        sp.add_argument("-v", "--verbose", action="store_true", help="log solver details on stderr")

    sp = sub.add_parser("size", help="synthesize multipliers and shunts from standard values")
    common(sp)
    sp.add_argument("-o", "--output", "--write-network", dest="output", metavar="OUT.yaml",
                    help="write the sized network as an editable project file ('-': to stdout, instead of the "
                         "table; --write-network is the older name)")
    sp.add_argument("--retrim", action="store_true",
                    help="keep the file's explicit network; propose the fewest new values that bring every "
                         "position within a tenth of the class")
    sp.add_argument("--series", metavar="E96", help="with --retrim: E-series of the new parts (default: each part's own)")
    sp.set_defaults(func=cmd_size)

    sp = sub.add_parser("check", help="accuracy per position: nominal, linearity, tolerance, temperature, loading")
    common(sp)
    sp.add_argument("--samples", metavar="N", help="Monte Carlo builds (default from the file, else 2000)")
    sp.add_argument("--seed", metavar="N", help="Monte Carlo seed (default from the file, else 1)")
    sp.add_argument("--source-impedance", metavar="R", help="impedance of the measured source, e.g. '100 kohm'")
    sp.add_argument("--quiet", action="store_true", help="no progress on stderr")
    sp.set_defaults(func=cmd_check)

    sp = sub.add_parser("faults", help="misrange survival matrix, part stress and switch transitions")
    common(sp)
    sp.add_argument("--position", metavar="NAME", help="only this position")
    sp.add_argument("--only-failing", action="store_true", help="list only cases that fail")
    sp.add_argument("--quiet", action="store_true", help="no progress on stderr")
    sp.set_defaults(func=cmd_faults)

    sp = sub.add_parser("apply", help="one stimulus on one position: movement current and every part's stress")
    common(sp)
    sp.add_argument("--position", required=True, metavar="NAME", help="switch position, e.g. '10 V'")
    g = sp.add_mutually_exclusive_group(required=True)
    g.add_argument("--volts", metavar="V", help="applied voltage (dc value or sine rms), e.g. 230 or '230 V'")
    g.add_argument("--amps", metavar="A", help="applied current, e.g. 0.01 or '10 mA'")
    g.add_argument("--ohms", metavar="R", help="a resistor across the input of a resistance position, e.g. '4.7 kohm'")
    sp.add_argument("--source-impedance", metavar="R", help="source impedance of a voltage stimulus, e.g. '0.5 ohm'")
    sp.add_argument("--temperature", metavar="T", help="ambient, degC as a bare number or with a unit")
    sp.add_argument("--waveform", choices=["dc", "sine", "square", "triangle"], default="dc",
                    help="dc value, or a sine, square or triangle wave given as rms")
    sp.set_defaults(func=cmd_apply)

    sp = sub.add_parser("dossier", help="write the PDF design dossier (and, with --bom, the BOM as CSV)")
    common(sp, json_flag=False)
    sp.add_argument("-o", "--output", metavar="OUT.pdf", help="output file (default: <project>-dossier.pdf)")
    sp.add_argument("--bom", metavar="OUT.csv", help="also write the bill of materials as CSV to this file")
    sp.add_argument("--date", metavar="YYYY-MM-DD", help="date on the cover (default: the file's date)")
    sp.add_argument("--samples", metavar="N", help="Monte Carlo builds for the accuracy section")
    sp.add_argument("--readings", metavar="READINGS.csv",
                    help="readings of the meter (position,applied,reading): adds the restoration section")
    sp.add_argument("--quiet", action="store_true", help="no progress on stderr")
    sp.set_defaults(func=cmd_dossier, json=False)

    sp = sub.add_parser("protect", help="search clamp placements and multiplier splits; write the chosen plan")
    common(sp)
    sp.add_argument("--share", metavar="S", help="share of the class the clamps may cost in linearity (default 0.25)")
    sp.add_argument("--seed", metavar="N", help="seed of the search (default from the file)")
    sp.add_argument("--max-candidates", default=2000, metavar="N", help="bound on candidates (default 2000)")
    sp.add_argument("-o", "--output", "--write", dest="output", metavar="OUT.yaml",
                    help="write the project with the chosen placement ('-': to stdout, instead of the table; "
                         "--write is the older name)")
    sp.add_argument("--quiet", action="store_true", help="no progress on stderr")
    sp.set_defaults(func=cmd_protect)

    sp = sub.add_parser("fit-diode", help="fit a diode model to measured (V, I) points from a CSV file")
    sp.add_argument("points", metavar="POINTS.csv", help="CSV with header voltage_v,current_a[,temperature_c]")
    sp.add_argument("--json", action="store_true", help="one JSON object on stdout, SI units")
    sp.add_argument("--name", default="fitted", help="model name for the YAML block (default: fitted)")
    sp.add_argument("--temperature", metavar="T",
                    help="temperature of points without a temperature column, degC as a bare number or with a unit")
    sp.add_argument("--xti", type=float, help="hold the saturation-current temperature exponent at this value")
    sp.add_argument("-v", "--verbose", action="store_true", help="log details on stderr")
    sp.set_defaults(func=cmd_fit_diode)

    sp = sub.add_parser("scale", help="printable scale plate at 1:1, ticks placed by the solved response")
    common(sp)
    sp.add_argument("-o", "--output", metavar="PLATE.pdf", help="output PDF (default: <project>-scale.pdf)")
    sp.add_argument("--svg", metavar="PLATE.svg", help="also write the plate as SVG (millimetre units)")
    sp.set_defaults(func=cmd_scale)
    _add_diagnose(sub)
    _add_netlist(sub)
    return p


def _log_warning(message, category, filename, lineno, file=None, line=None) -> None:
    """Send a Python warning to the log (shown with -v) instead of the terminal."""
    import logging

    logging.getLogger("planner.warnings").info("%s:%s: %s: %s", filename, lineno, category.__name__, message)


def _run(args) -> int:
    """Run a subcommand with warnings sent to the log.

    The numeric core guards its own floating-point edge cases with local
    ``np.errstate``; a numpy ``RuntimeWarning`` that still escapes (an overflow the
    code then handles) must not print source lines on the terminal, so every
    warning of the command goes to the ``planner.warnings`` log, which ``-v``
    shows. Filters set from outside (``python -W error``) still apply.
    """
    import warnings

    with warnings.catch_warnings():
        warnings.showwarning = _log_warning
        return args.func(args)


#: The thread pools of numpy's linear algebra libraries, held to one thread by the command line.
BLAS_THREADS = ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS")


def _one_blas_thread() -> None:
    """One linear-algebra thread, unless the caller's environment says otherwise.

    The solver's systems are small (a few tens of nodes, batched over cases by numpy), so a
    pool of BLAS threads only waits for work: measured on ``planner check`` of the flagship
    on two cores under load, 1.35 x the CPU time and 1.4 x the wall time of one thread. The
    dossier's second process (:mod:`planner.background`) then has a core of its own. Set
    before numpy is first imported (the commands import it); a variable already set is kept.
    """
    if "numpy" not in sys.modules:
        import os

        for name in BLAS_THREADS:
            os.environ.setdefault(name, "1")


def main(argv=None) -> int:
    _one_blas_thread()
    for stream in (sys.stdout, sys.stderr):  # text the terminal's encoding cannot show: escaped, not a crash
        try:
            stream.reconfigure(errors="backslashreplace")
        except (AttributeError, ValueError):  # a stream that is no text file (a test's StringIO)
            pass
    parser = build_parser()
    args = parser.parse_args(argv)
    if not getattr(args, "command", None):
        parser.print_help(sys.stderr)
        return EXIT_INPUT
    if args.verbose:
        import logging

        logging.basicConfig(level=logging.INFO, format="%(name)s: %(message)s", stream=sys.stderr)
    from .errors import PlannerError

    try:
        _options(args)
        return _run(args)
    except PlannerError as exc:
        print(f"planner: {exc.one_line()}", file=sys.stderr)
        return exc.exit_code
    except KeyboardInterrupt:
        print("planner: interrupted; nothing was written", file=sys.stderr)
        return 130
    except BrokenPipeError:
        return EXIT_OK
    except MemoryError:
        print("planner: out of memory; lower --samples or the number of positions", file=sys.stderr)
        return EXIT_INPUT
    except Exception as exc:  # a bug, not the user's mistake
        print(f"planner: internal error: {type(exc).__name__}: {' '.join(str(exc).split())[:300]} "
              "(please report it with the project file; run with PLANNER_DEBUG=1 for details)", file=sys.stderr)
        import os

        if os.environ.get("PLANNER_DEBUG"):
            raise
        return EXIT_INTERNAL


# --- restoration: planner diagnose, planner size --retrim ----------------------------------


def _series_option(text):
    """An E-series name from the command line, or None."""
    if text is None:
        return None
    from . import eseries
    from .errors import UsageError

    try:
        return eseries.normalise(text)
    except ValueError:
        raise UsageError(f"--series: unknown E-series '{text}'; use one of {', '.join(eseries.series_names())}") from None


def cmd_retrim(args) -> int:
    from .errors import UsageError

    if args.output:
        raise UsageError("-o/--output writes a sized network; with --retrim the file keeps its network: fit the "
                         "parts listed and change their values in the file")
    series = _series_option(args.series)
    spec = _load(args)  # before the heavy imports: bad input is answered sooner
    from .retrim import format_retrim, retrim, retrim_json

    result = retrim(spec, series=series)
    _emit(args, retrim_json(result), format_retrim(result))
    return EXIT_OK if result.requirements_met else EXIT_SHORT


def cmd_diagnose(args) -> int:
    series = _series_option(args.series)
    resolution = None if args.resolution is None else _quantity(args.resolution, "fraction", "--resolution")
    share = 0.25 if args.share is None else _quantity(args.share, "fraction", "--share")
    spec = _load(args)  # before the heavy imports: bad input is answered sooner
    from .diagnose import diagnose, diagnosis_json, format_diagnosis

    result = diagnose(spec, args.readings, resolution=resolution, share=share, series=series)
    _emit(args, diagnosis_json(result), format_diagnosis(result))
    return EXIT_OK if result.requirements_met else EXIT_SHORT


def _add_diagnose(sub) -> None:
    sp = sub.add_parser("diagnose", help="find the drifted parts of an existing meter from its readings; propose "
                                         "replacements")
    sp.add_argument("project", metavar="FILE", help="project file (YAML) with the meter's network")
    sp.add_argument("readings", metavar="READINGS.csv", help="CSV with header position,applied,reading")
    sp.add_argument("--json", action="store_true", help="one JSON object on stdout, SI units")
    sp.add_argument("--resolution", metavar="R", help="reading resolution, share of full scale, e.g. '0.5 %%' "
                                                      "(default: the class index)")
    sp.add_argument("--share", metavar="S", help="share of the class the replacements aim within (default 0.25)")
    sp.add_argument("--series", metavar="E96", help="E-series of the replacements (default: each part's own)")
    sp.add_argument("-v", "--verbose", action="store_true", help="log solver details on stderr")
    sp.set_defaults(func=cmd_diagnose)


# --- planner netlist -----------------------------------------------------------------------


def cmd_netlist(args) -> int:
    out = args.output or "-"
    _check_output(out, args.project)
    # --volts, --amps, --ohms [SI] and --temperature [K] are converted with every command's options
    ohms, volts, amps, temp = args.ohms, args.volts, args.amps, args.temperature
    spec = _load(args)  # before the heavy imports: bad input is answered sooner
    from . import __version__
    from .engine import Engine
    from .export import spice_deck, stimulus_for
    from .fsio import emit

    design = _design(spec, args.position)
    st = design.state(args.position)  # an unknown name: exit 2 with the nearest one
    stim = stimulus_for(st.position, volts=volts, amps=amps, ohms=ohms)
    expected = None
    if stim.kind in ("voltage", "current"):  # the planner's own answer, for the reader to compare
        op = Engine(design).operate(st, [stim.value], kind=stim.kind, temperature_k=temp)
        expected = float(op.movement_current_a[0, 0])
    deck = spice_deck(design, st.name, stim, temperature_k=temp, expected_a=expected, source=args.project,
                      version=__version__)
    if emit(out, deck, protect=[args.project]):
        print(f"wrote {out}", file=sys.stderr)
    return EXIT_OK


def _add_netlist(sub) -> None:
    sp = sub.add_parser("netlist", help="a SPICE deck of one position (ngspice runs it as written; i(vmove) is "
                                        "the movement current)")
    sp.add_argument("project", metavar="FILE", help="project file (YAML)")
    sp.add_argument("--position", required=True, metavar="NAME", help="switch position, e.g. '10 V'")
    g = sp.add_mutually_exclusive_group()
    g.add_argument("--volts", metavar="V", help="applied voltage, e.g. 12 or '12 V' (default: the position's full "
                                                "scale)")
    g.add_argument("--amps", metavar="A", help="applied current, e.g. 0.01 or '10 mA'")
    g.add_argument("--ohms", metavar="R", help="resistor across the terminals of a resistance position, e.g. '1 kohm'")
    sp.add_argument("--temperature", metavar="T", help="ambient, degC as a bare number or with a unit "
                                                       "(default: the reference temperature)")
    sp.add_argument("-o", "--output", metavar="OUT.cir", help="write the deck to this file (default, or '-': "
                                                              "standard output)")
    sp.add_argument("-v", "--verbose", action="store_true", help="log details on stderr")
    sp.set_defaults(func=cmd_netlist)


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
