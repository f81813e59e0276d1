"""The ``biasbook`` command: list the topologies and part classes, evaluate a design record.

Exit status: 0 done; 2 bad record or bad command line; 3 the design cannot
be evaluated (load voltage outside compliance, supply too low, no converged
operating point); 1 the output was cut short (stdout closed early).  Errors
print one line on stderr naming the record field and its valid range; with
``--json`` an error object also goes to stdout.
JSON output is strict: an infinite number is written as the string
``"inf"`` or ``"-inf"``.

Examples
--------
>>> main(["--version"])  # doctest: +ELLIPSIS
biasbook ...
0
"""

from __future__ import annotations

import argparse
import json
import os
import sys

import kit
from kit.analysis.eseries import SERIES
from kit.errors import DesignError
from kit.record import EDGES
from kit.safety import terminal_text

__all__ = ["main", "build_parser", "EXIT_OK", "EXIT_BAD_INPUT", "EXIT_NOT_EVALUABLE"]

EXIT_OK = 0
EXIT_BAD_INPUT = 2
EXIT_NOT_EVALUABLE = 3
EXIT_CUT_SHORT = 1  # stdout closed before the report was written

EDGE_WORDS = {"vce_sat": "saturated below its V_CE(sat)",
              "vcb_zero": "saturated once the collector-base junction is forward biased by more than V_T"}


class _UsageError(Exception):
    """A command-line mistake; argparse would otherwise exit on its own."""


class _Parser(argparse.ArgumentParser):
    def error(self, message):
        raise _UsageError(f"{message} (see {self.prog} --help)")


def build_parser():
    """The argument parser of ``biasbook`` (kept separate so docs can print its help)."""
    parser = _Parser(prog="biasbook",
                     description="Evaluate transistor DC current sources from design records.")
    parser.add_argument("--version", action="version", version=f"biasbook {kit.__version__}")
    commands = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    commands.required = True
    listing = commands.add_parser(
        "topologies", help="list the circuits the kit can evaluate",
        description="List every topology with its values and what the kit derives.")
    listing.add_argument("--json", action="store_true", help="print a JSON list instead of text")
    parts = commands.add_parser(
        "parts", help="list the generic part classes a record can name",
        description="List the part classes (generic, from memory, not a part's data): their "
                    "datasheet-style entries and the model and spreads they give. A record names "
                    "one in [devices.<part>] with class = \"...\" and overrides any field.")
    parts.add_argument("--json", action="store_true", help="print a JSON list instead of text")
    evaluate = commands.add_parser(
        "evaluate", help="evaluate a design record (TOML)",
        description="Solve a design record exactly and report current, compliance, output "
                    "resistance, sensitivities, tempco and the ledger of simplifications.")
    evaluate.add_argument("record", metavar="RECORD.toml", help="a design record file")
    evaluate.add_argument("--json", action="store_true",
                          help="print one JSON object instead of text")
    evaluate.add_argument("--edge", choices=EDGES, default=None,
                          help="saturation criterion; overrides the record's conditions.edge")
    evaluate.add_argument("--no-self-heating", action="store_true",
                          help="compliance without self-heating (default: it ends where the junctions' "
                               "heating runs away, with the record's [thermal] network)")
    check = commands.add_parser(
        "check", help="check a record's [spec]: exit 0 when met, 1 when not",
        description="Check the record's specification by extreme values (the guarantee), RSS and "
                    "Monte Carlo. Exit 0 when the extreme-value bound meets it, 1 when not, 2 for a "
                    "bad record, 3 when the design cannot be evaluated.")
    check.add_argument("record", metavar="RECORD.toml", help="a design record with a [spec] section")
    check.add_argument("--json", action="store_true", help="print one JSON object instead of text")
    check.add_argument("--no-self-heating", action="store_true",
                       help="junctions at ambient (default: ambient + theta_JA x dissipation)")
    synth = commands.add_parser(
        "synthesize", help="standard values meeting a record's [spec], ranked by margin",
        description="Size each topology for the record's [spec], starting from the record (every value, "
                    "part and condition it does not search is kept), snap the resistors to an E-series and "
                    "rank the candidates by worst-case margin; designs needing an external reference are "
                    "ranked apart. Progress goes to stderr.")
    synth.add_argument("record", metavar="RECORD.toml", help="a design record with a [spec] section")
    synth.add_argument("--json", action="store_true", help="print one JSON object instead of text")
    synth.add_argument("--all", action="store_true",
                       help="try every topology (default: the record's own) that sinks or sources like the record")
    synth.add_argument("--series", type=str.upper, choices=SERIES, default=None,
                       help="E-series of the resistors, whatever their tolerance (default: the series "
                            "customary for the spec's resistor tolerance)")
    spread_cmd = commands.add_parser(
        "spread", help="the four questions of a current source: compliance, gain spread, tempco, supply",
        description="For the record's design: the current and its compliance range; how much the "
                    "current moves over a gain range (base-current part) and across the load range "
                    "(output-conductance part), and both together; the tempco with the gain held "
                    "constant and rising; and, with --supply, over a supply range.")
    spread_cmd.add_argument("record", metavar="RECORD.toml", help="a design record file")
    spread_cmd.add_argument("--beta", metavar="LO:HI",
                            help="gain range of the bipolar transistors (default: the record's [spec] "
                                 "range, else half to twice the nominal gain)")
    spread_cmd.add_argument("--beta-rise", metavar="RATE",
                            help="linear rise of the gain with temperature, e.g. '0.5 %%/K' "
                                 "(default: the devices' own law)")
    spread_cmd.add_argument("--supply", metavar="LO:HI", help="supply range in V, e.g. 10:14")
    spread_cmd.add_argument("--load", metavar="LO:HI",
                            help="load-voltage range in V (default: the record's [spec] range, else "
                                 "from the compliance edge to the supply for a sink, 0 V for a source)")
    spread_cmd.add_argument("--json", action="store_true", help="print one JSON object instead of text")
    review = commands.add_parser(
        "review", help="design-review PDF of a notebook or a record",
        description="Execute a design notebook (or a record through the standard template) in a "
                    "fresh kernel and print it to PDF offline with Chromium.")
    review.add_argument("source", metavar="NOTEBOOK.ipynb|RECORD.toml")
    review.add_argument("-o", "--output", required=True, metavar="OUT.pdf")
    review.add_argument("--with-code", action="store_true", help="show the code cells too")
    review.add_argument("--keep-html", metavar="PAGE.html", help="also keep the HTML page")
    review.add_argument("--html-twin", metavar="TWIN.html",
                        help="also write one self-contained HTML file that opens with no network "
                             "(equations set, plots interactive) for a wiki or an e-mail")
    new = commands.add_parser(
        "new", help="start a design notebook for a topology",
        description="Write a design notebook from the standard template, with the topology's default "
                    "values or those of a record.")
    new.add_argument("topology", metavar="TOPOLOGY", help="a name from `biasbook topologies`")
    new.add_argument("-o", "--output", required=True, metavar="NOTEBOOK.ipynb")
    new.add_argument("--record", metavar="RECORD.toml", help="take the design from this record")
    new.add_argument("--polarity", default=None, help="one of the topology's polarity words: npn or pnp, nmos or pmos (default: the record's, else the first)")
    return parser


def main(argv=None):
    """Run the command line and return the exit status.

    Parameters
    ----------
    argv : list of str, optional
        Arguments without the program name (default: ``sys.argv[1:]``).

    Returns
    -------
    int
        0 done, 2 bad record or usage, 3 design cannot be evaluated.
    """
    argv = sys.argv[1:] if argv is None else list(argv)
    wants_json = "--json" in argv
    try:
        args = build_parser().parse_args(argv)
    except _UsageError as err:
        return _report_failure({"error": "UsageError", "message": str(err), "parameter": None,
                                "value": None, "valid": "see biasbook --help"},
                               str(err), EXIT_BAD_INPUT, wants_json)
    except SystemExit as done:  # --help and --version print and stop here
        return int(done.code or 0)
    try:
        if args.command == "topologies":
            return _list_topologies(args.json)
        if args.command == "parts":
            return _list_parts(args.json)
        if args.command == "check":
            return _check(args.record, args.json, not args.no_self_heating)
        if args.command == "synthesize":
            return _synthesize(args.record, args.json, args.all, args.series)
        if args.command == "spread":
            return _spread(args)
        if args.command == "review":
            return _review(args.source, args.output, args.with_code, args.keep_html, args.html_twin)
        if args.command == "new":
            return _new(args.topology, args.output, args.record, args.polarity)
        return _evaluate(args.record, args.edge, args.json, not args.no_self_heating)
    except BrokenPipeError:  # the reader left early (`| head`): stop quietly
        _silence_stdout()
        return EXIT_CUT_SHORT


def _silence_stdout():
    # Python's own advice for SIGPIPE: point stdout at devnull so the
    # interpreter's final flush does not raise again.
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
    except (OSError, ValueError, AttributeError):
        pass  # stdout is not a real file (a test capture); nothing to flush


def _say(text=""):
    """Print report text: record text is a stranger's, so no byte of it may drive the terminal."""
    print(terminal_text(text))


def _emit_json(value):
    from kit.record import json_ready

    print(json.dumps(json_ready(value), indent=2, ensure_ascii=True, allow_nan=False))


_ERROR_COLOUR, _PLAIN = "\x1b[1;31m", "\x1b[0m"


def _colour_wanted(stream):
    """Colour only for a terminal, and not when NO_COLOR is set (no-color.org) or TERM is dumb."""
    try:
        terminal = stream.isatty()
    except (AttributeError, ValueError):  # no such method, or the stream is closed
        return False
    return terminal and not os.environ.get("NO_COLOR") and os.environ.get("TERM") != "dumb"


def _report_failure(details, text, code, wants_json):
    head = f"{_ERROR_COLOUR}biasbook:{_PLAIN}" if _colour_wanted(sys.stderr) else "biasbook:"
    print(f"{head} {terminal_text(text)}", file=sys.stderr)  # the text never carries escapes
    if wants_json:
        _emit_json(details | {"exit_code": code})
    return code


def _failure(err, code, wants_json):
    return _report_failure(err.to_dict(), str(err), code, wants_json)


# --- topologies ---------------------------------------------------------------------

def _list_topologies(as_json):
    from kit.report import topology as report
    from kit.topologies import all_topologies

    if as_json:
        _emit_json([report.describe(t) for t in all_topologies()])
    else:
        _say("\n\n".join(report.text(t) for t in all_topologies()))
    return EXIT_OK


def _list_parts(as_json):
    from kit.devices.part_classes import CLASSES
    from kit.report import parts as report

    if as_json:
        _emit_json([report.describe(c) for c in CLASSES.values()])
    else:
        _say("\n\n".join(report.text(c) for c in CLASSES.values()))
    return EXIT_OK


# --- evaluate -----------------------------------------------------------------------

def _evaluate(path, edge, as_json, self_heating=True):
    from kit.record import load_record

    try:
        record = load_record(path)
    except DesignError as err:  # a RecordError naming the field
        return _failure(err, EXIT_BAD_INPUT, as_json)
    edge = edge or record.edge
    from kit import report as reports
    from kit.report.cautions import cautions

    try:
        evaluation = kit.evaluate(record.design, edge=edge, self_heating=self_heating, network=record.thermal)
        report = evaluation.to_dict() if as_json else reports.text(evaluation)
        warnings = cautions(evaluation)
    except DesignError as err:
        return _failure(_as_field(err, record), EXIT_NOT_EVALUABLE, as_json)
    digest = record.content_hash()
    if as_json:
        _emit_json({"record": record.to_dict(), "content_hash": digest, "migrated": list(record.migrated),
                    "evaluation": report, "cautions": warnings})
        return EXIT_OK
    _say(_record_heading(record, digest, edge))
    _say()
    _say(report)
    if warnings:
        _say("\ncautions")
        _say("\n".join(f"  ! {w}" for w in warnings))
    return EXIT_OK


def _as_field(err, record):
    """The error naming the record field (``values.r1``), not the kit's flat parameter,
    and its value with the parameter's unit (``"500 mV"``, as a record would write it)."""
    from kit.devices.base import is_real_number
    from kit.quantities import format_quantity
    from kit.record import field_path

    design = record.design
    value = err.value
    words = design.vocabulary
    if err.parameter in words and is_real_number(value) and words[err.parameter].unit:
        value = format_quantity(float(value), words[err.parameter].unit, 4)
    return type(err)(err.message, parameter=field_path(err.parameter, design.topology, design.polarity),
                     value=value, valid=err.valid)


def _record_heading(record, digest, edge):
    by = [part for part in (f"revision {record.revision}" if record.revision else "",
                            f"by {record.author}" if record.author else "") if part]
    lines = [f"record    {record.title}" + (f" ({', '.join(by)})" if by else ""),
             f"file      {record.source}",
             f"sha256    {digest}"]
    if any(part.kind.key == "bjt" for part in record.design.structure.devices):
        lines.append(f"edge      {edge}: a bipolar transistor counts as {EDGE_WORDS[edge]}")
    lines += [f"migrated  {note}" for note in record.migrated]
    for name, model in record.design.devices.items():
        lines.append(f"{name:<9} {model.label}")
    if record.thermal is not None:
        lines.append(f"thermal   {record.thermal.describe()}")
    return "\n".join(lines)


# --- check, synthesize -------------------------------------------------------------

EXIT_SPEC_NOT_MET = 1


def _record_with_spec(path, as_json):
    """``(record, None)`` or ``(None, exit code)`` after reporting the problem."""
    from kit.errors import RecordError
    from kit.record import load_record

    try:
        record = load_record(path)
    except DesignError as err:
        return None, _failure(err, EXIT_BAD_INPUT, as_json)
    if record.spec is None:
        err = RecordError("this record has no [spec] section to check against", parameter="spec",
                          valid="a [spec] table with current and tolerance (docs/record-format.md)")
        return None, _failure(err, EXIT_BAD_INPUT, as_json)
    return record, None


def _check(path, as_json, self_heating):
    from kit.analysis.worstcase import worst_case
    from kit.report import text

    record, code = _record_with_spec(path, as_json)
    if record is None:
        return code
    try:
        # the design point itself must work (past a runaway edge it does not, when self-heated)
        kit.evaluate(record.design, edge=record.edge, self_heating=self_heating, network=record.thermal)
        result = worst_case(record.design, record.spec, self_heating=self_heating, edge=record.edge,
                            network=record.thermal, written=_spec_fields_written(record.source))
    except DesignError as err:
        return _failure(_as_field(err, record), EXIT_NOT_EVALUABLE, as_json)
    if as_json:
        check = result.to_dict()
        _emit_json({"record": record.to_dict(), "content_hash": record.content_hash(),
                    "migrated": list(record.migrated), "check": check, "box": check["box"],
                    "stress": check["stress"], "faults": check["faults"]})
    else:
        _say(_record_heading(record, record.content_hash(), record.edge))
        _say()
        _say(text(result))
    return EXIT_OK if result.met else EXIT_SPEC_NOT_MET


def _spec_fields_written(path):
    """The keys of the record's [spec] table as written (its defaults are listed as such), or None."""
    import tomllib

    try:
        with open(path, "rb") as handle:
            table = tomllib.load(handle).get("spec")
    except (OSError, tomllib.TOMLDecodeError):
        return None
    if not isinstance(table, dict):
        return None
    older = {"mismatch": "mismatch_beta"}  # an older record's name for the gain mismatch
    return {older.get(key, key) for key in table}


def _synthesize(path, as_json, every, series):
    from kit.analysis.synthesis import synthesize
    from kit.report import text
    from kit.report.worstcase import spec_line

    record, code = _record_with_spec(path, as_json)
    if record is None:
        return code
    design = record.design

    def progress(index, total, key):
        print(f"synthesize [{index}/{total}] {key}", file=sys.stderr, flush=True)

    own = {"topologies": None} if every else {"topologies": [design.topology.key],
                                              "polarities": [design.polarity]}
    try:
        result = synthesize(record.spec, start=design, series=series, edge=record.edge, progress=progress, **own)
    except DesignError as err:
        return _failure(_as_field(err, record), EXIT_NOT_EVALUABLE, as_json)
    if as_json:
        _emit_json({"record": record.to_dict(), "content_hash": record.content_hash(),
                    "migrated": list(record.migrated), "synthesis": result.to_dict()})
    else:
        _say(_record_heading(record, record.content_hash(), record.edge))
        _say(f"spec      {spec_line(record.spec)}")
        _say()
        _say(text(result))
    return EXIT_OK if result.best is not None else EXIT_SPEC_NOT_MET


# --- review, new ----------------------------------------------------------------------

def _range_option(text, option, unit):
    """``"10:14"`` -> ``(10.0, 14.0)``; a usage error naming the option otherwise."""
    from kit.errors import ParameterError
    from kit.quantities import parse_quantity

    if text is None:
        return None
    parts = text.split(":")
    if len(parts) != 2:
        raise ParameterError("needs two values as LO:HI", parameter=option, value=text,
                             valid=f"e.g. 10:14 (in {unit})" if unit else "e.g. 80:300")
    return tuple(parse_quantity(part.strip(), unit or None, name=option) for part in parts)


def _spread(args):
    """``biasbook spread``: :func:`kit.analysis.spread.spread` on a record's design."""
    from kit import report
    from kit.analysis.spread import spread
    from kit.quantities import parse_quantity
    from kit.record import load_record

    try:
        record = load_record(args.record)
        beta = _range_option(args.beta, "--beta", "")
        supply = _range_option(args.supply, "--supply", "V")
        load = _range_option(args.load, "--load", "V")
        rise = None if args.beta_rise is None else parse_quantity(args.beta_rise, "1/K", name="--beta-rise")
    except DesignError as err:
        return _failure(err, EXIT_BAD_INPUT, args.json)
    spec, said = record.spec, {"beta_source": "given", "load_source": "given"}
    # an option the user wrote is theirs to correct (exit 2); the record's are the design's
    options = {"beta": "--beta", "beta_rise": "--beta-rise", "supply": "--supply"}
    if load is not None:
        options["v_load"] = "--load"
    if beta is None and spec is not None and spec.beta:
        ranges = list(spec.beta.values())
        beta, said["beta_source"] = (min(r[0] for r in ranges), max(r[1] for r in ranges)), "the record's [spec]"
    if load is None and spec is not None and spec.v_load is not None:
        load, said["load_source"] = spec.v_load, "the record's [spec]"
    try:
        result = spread(record.design, beta=beta, beta_rise=rise, supply=supply, v_load=load,
                        edge=record.edge, network=record.thermal, **said)
    except DesignError as err:
        if err.parameter in options:
            return _failure(type(err)(err.message, parameter=options[err.parameter], value=err.value,
                                      valid=err.valid), EXIT_BAD_INPUT, args.json)
        return _failure(_as_field(err, record), EXIT_NOT_EVALUABLE, args.json)
    if args.json:
        _emit_json({"record": record.to_dict(), "content_hash": record.content_hash(),
                    "spread": result.to_dict()})
        return EXIT_OK
    _say(_record_heading(record, record.content_hash(), record.edge))
    _say()
    _say(report.text(result))
    return EXIT_OK


def _review(source, output, with_code, keep_html, twin=None):
    from kit.review.build import build_review

    live = sys.stderr.isatty()

    def progress(stage, cell=None, cells=None):
        if cell is None:
            print(f"biasbook review: {stage}", file=sys.stderr, flush=True)
            return
        # One line rewritten in a terminal; a line per cell in a log.
        line = f"biasbook review: executing, {cell} of {cells} cells done"
        last = cell == cells
        print(("\r" + line + ("\n" if last else "")) if live else line, end="" if live else "\n",
              file=sys.stderr, flush=True)

    try:
        build_review(source, output, with_code=with_code, progress=progress, keep_html=keep_html, twin=twin)
    except DesignError as err:
        return _failure(err, EXIT_BAD_INPUT if err.parameter in ("source", "file") or
                        type(err).__name__ == "RecordError" else EXIT_NOT_EVALUABLE, False)
    _say(output)
    if twin:
        _say(twin)
    return EXIT_OK


def _new(topology, output, record_path, polarity):
    import nbformat

    from kit.review.notebook import new_notebook

    try:
        if record_path:
            from kit.record import load_record

            record = load_record(record_path)
            if record.design.topology.key != topology:
                raise DesignError("the record is of another topology", parameter="topology",
                                  value=topology, valid=record.design.topology.key)
            relative = os.path.relpath(os.path.abspath(record_path), os.path.dirname(os.path.abspath(output)))
            notebook = new_notebook(record.design, record_path=relative, title=record.title, notes=record.notes,
                                    has_spec=record.spec is not None)
        else:
            design = kit.design(topology, polarity, title=f"New {topology} design")
            notebook = new_notebook(design)
    except DesignError as err:
        return _failure(err, EXIT_BAD_INPUT, False)
    if os.path.exists(output):
        print(f"biasbook: {terminal_text(output)} exists; not overwritten", file=sys.stderr)
        return EXIT_BAD_INPUT
    nbformat.write(notebook, output)
    _say(output)
    return EXIT_OK


if __name__ == "__main__":
    raise SystemExit(main())
