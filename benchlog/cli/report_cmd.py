"""Subcommand `report`: one self-contained HTML or PDF file from one or more runs, optionally against a part spec.

Exit codes: 0 written; 2 bad input, or an -o / --figures path refused before
writing (one of the inputs, an existing run file, a folder, read-only, under
/proc or /sys); 4 the report could not be written part way (disk full).
"""

from __future__ import annotations

import math
import sys
from pathlib import Path

from benchlog.badinput import BadInput
from benchlog.filecheck import check_input, check_output_dir, check_output_file, write_failure

SUFFIXES = (".html", ".htm", ".pdf")
MODELS = ("auto", "resistive", "diode", "knee")


def _current(text: str) -> float:
    try:
        value = float(text)
    except ValueError:
        raise BadInput("argument", "--at", f"is {text!r}", "a current in amperes, e.g. 2.0") from None
    if not math.isfinite(value) or value <= 0:
        raise BadInput("argument", "--at", f"is {text!r}", "a finite current above 0 A")
    return value


def register(sub) -> None:
    """Add this module's subcommands to the `benchlog` parser."""
    p = sub.add_parser(
        "report",
        help="write a self-contained HTML or PDF report of one or more runs",
        description=(
            "Write one file (HTML with inline figures, or PDF) holding each run's metadata, the fit with "
            "its uncertainty, the verdict against the part spec with its decision rule, events, limit hits "
            "and figures. Several runs add an overlay and a comparison table; runs of one lot add the lot "
            "summary. Incomplete runs are reported as incomplete."
        ),
    )
    p.add_argument("runs", nargs="*", metavar="RUN", help="run files (.run)")
    p.add_argument("--spec", metavar="SPEC.toml", help="part spec to predict and judge against")
    p.add_argument("-o", "--output", required=True, metavar="FILE",
                   help="report file to write: FILE.html or FILE.pdf")
    p.add_argument("--at", metavar="AMPS", help="operating current for the verdict (default: the plan's, "
                   "else the largest measured)")
    p.add_argument("--model", choices=MODELS, default="auto", help="fit model (default: auto, or the "
                   "model the verdict uses when --spec is given)")
    p.add_argument("--design", metavar="DESIGN.toml", help="add the design review of this design file")
    p.add_argument("--figures", metavar="DIR", help="also write every figure as PNG and SVG into DIR")
    p.add_argument("--compare", action="store_true", help="add the differences to the first run with their "
                   "uncertainty for any number of runs (done without asking for up to 6 runs)")
    p.add_argument("--trend", metavar="QUANTITY", help="add the archive's control chart of a fitted quantity "
                                                       "(e.g. r_on_ohm; see `benchlog archive trend`)")
    p.add_argument("--trend-by", choices=("lot", "day", "bench"), default="lot", help="subgroups of the trend")
    p.add_argument("--history", metavar="SERIAL", help="add every archived measurement of this part "
                                                       "(see `benchlog archive history`)")
    p.add_argument("--compare-lots", nargs=2, metavar=("A", "B"), help="add two archived lots compared: "
                   "difference of means ± U, Welch's test, capability (see `benchlog archive compare-lots`)")
    p.add_argument("--lots-quantity", default="r_on_ohm", metavar="Q",
                   help="fitted parameter --compare-lots compares (default r_on_ohm)")
    p.add_argument("--usl", type=float, help="upper specification limit for --compare-lots' Cpk / Cpu")
    p.add_argument("--lsl", type=float, help="lower specification limit for --compare-lots' Cpk / Cpl")
    p.add_argument("--find", metavar="FILTER", help="add the archived runs a filter selects, typed as in the UI: "
                   "'lot:L07 verdict:fail since:2025-03-01' (serial: lot: kind: part: verdict: bench: since: "
                   "until: date:, bare words search serial, lot and part)")
    p.add_argument("--db", metavar="URL", help="archive for --trend, --history, --compare-lots and --find "
                                               "(default: $BENCHLOG_DB, else sqlite:///benchlog-archive.sqlite)")
    p.set_defaults(handler=run)


def run(args) -> int:
    out = Path(args.output)
    if out.suffix.lower() not in SUFFIXES:
        raise BadInput("argument", "-o", f"'{out}' has no report suffix", "a file name ending in .html or .pdf")
    inputs = [*args.runs, *(p for p in (args.spec, args.design) if p is not None)]
    check_output_file(out, "-o", inputs=inputs)
    if args.figures:
        check_output_dir(args.figures, "--figures")
    at_a = _current(args.at) if args.at is not None else None
    for path in args.runs:
        check_input(path, "run file")
    asks_archive = any(x is not None for x in (args.trend, args.history, args.compare_lots, args.find))
    if not args.runs and args.design is None and not asks_archive:
        raise BadInput("argument", "RUN", "no run file given", "one or more .run files, --design DESIGN.toml, "
                       "or an archive section (--trend, --history, --compare-lots, --find)")
    if args.design is not None:
        check_input(args.design, "design file (.toml)")
    if args.spec is not None:
        check_input(args.spec, "part spec (.toml)")

    # imported here so that `benchlog --help` stays fast (matplotlib loads only for a report)
    from benchlog.report import write_report
    from benchlog.report.build import build_report
    from benchlog.report.figures import save

    archived = []
    if asks_archive:
        from benchlog.cli.report_archive import archive_sections

        archived = archive_sections(args.db, trend=args.trend, trend_by=args.trend_by, serial=args.history,
                                    lots=args.compare_lots, quantity=args.lots_quantity, usl=args.usl,
                                    lsl=args.lsl, find=args.find)
    doc = build_report(args.runs, spec_path=args.spec, model=args.model, at_a=at_a, design_path=args.design,
                       compare=True if args.compare else None, archived=archived)
    try:
        write_report(doc, out)
    except OSError as exc:
        raise write_failure(out, exc, "the input files are untouched") from None
    if args.figures:
        folder = Path(args.figures)
        target = folder
        try:
            folder.mkdir(parents=True, exist_ok=True)
            for n, block in enumerate(doc.figures(), start=1):
                for fmt in ("png", "svg"):
                    target = folder / f"figure{n:02d}-{block.name}.{fmt}"
                    save(block.figure, target)
        except OSError as exc:
            raise write_failure(target, exc, f"the report {out} was written") from None
    sys.stdout.write(f"{out}\n")
    return 0
