"""`osmodose course ...`: keep a patient's episode file, review it, plan the next dose, plot it.

Thin shell: parse the options, call `osmodose.course`, print.  The course
modules (and matplotlib, for `plot`) are imported inside the handlers so
registering this command costs nothing at start-up.
"""

from __future__ import annotations

import argparse
import json
from datetime import datetime
from typing import TYPE_CHECKING

from osmodose.case.fields import FIELDS, LAB_KEYS, keys
from osmodose.cli.exit_codes import BY_STATUS, OK
from osmodose.cli.formulary_arg import add_formulary_option, formulary_from_args
from osmodose.cli.patient_args import add_field_options, case_fields

if TYPE_CHECKING:
    pass

HELP = "a course of therapy: serial labs, doses and pressures in an episode file"


def _sub(
    subparsers: argparse._SubParsersAction, name: str, text: str, formulary: bool = True
) -> argparse.ArgumentParser:
    parser = subparsers.add_parser(name, help=text, description=text + ".")
    parser.add_argument("file", metavar="FILE", help="the episode file (JSON)")
    if formulary:
        add_formulary_option(parser)
    return parser


def register(subparsers: argparse._SubParsersAction) -> None:
    course = subparsers.add_parser("course", help=HELP, description=HELP + ". Decision support only.")
    sub = course.add_subparsers(title="course commands", metavar="COMMAND", required=True)

    new = _sub(sub, "new", "start an episode file for one patient", formulary=False)
    add_field_options(new, (*keys("patient"), "label"), required=("weight", "age", "sex"))
    new.set_defaults(handler=run_new)

    lab = _sub(sub, "add-lab", "add serum labs drawn at one time", formulary=False)
    add_field_options(lab, ("time", *LAB_KEYS))
    lab.add_argument(
        "--labs",
        metavar="BUNDLE",
        default=None,
        help="take the labs from an HL7 FHIR R4 file: the newest final values, at the sodium's time "
        "(typed values win; docs/data-in.md)",
    )
    lab.set_defaults(handler=run_add_lab, required_unless_labs=(lab, ("time", "sodium")))

    imported = _sub(
        sub,
        "import",
        "add every final lab, reading and dose of an HL7 FHIR R4 file (Bundle or NDJSON) not in the episode yet",
    )
    imported.add_argument("bundle", metavar="BUNDLE", help="the FHIR file (JSON Bundle, one resource, or NDJSON)")
    imported.set_defaults(handler=run_import)

    dose = _sub(sub, "add-dose", "add a dose given (the agent must be in the formulary)")
    add_field_options(
        dose,
        ("time", "agent", "volume", "duration"),
        required=("time", "agent", "volume"),
        help_for={"time": FIELDS["time"].help + " (start of the infusion)", "volume": "volume given; bare number = mL"},
    )
    dose.set_defaults(handler=run_add_dose)

    reading = _sub(sub, "add-reading", "add a bedside reading: MAP and ICP (CPP = MAP - ICP)", formulary=False)
    add_field_options(reading, ("time", *keys("reading")), required=("time", *keys("reading")))
    reading.set_defaults(handler=run_add_reading)

    show = _sub(sub, "show", "the timeline table and the findings across the course")
    show.add_argument("--json", action="store_true", help="print one JSON object instead of the table")
    show.set_defaults(handler=run_show)

    plan = _sub(sub, "plan", "what the next dose would do, projected from the latest sodium and the doses since")
    add_field_options(plan, keys("order"), required=("agent",))
    add_field_options(plan, ("time",), help_for={"time": FIELDS["time"].help + " (default: now)"})
    plan.add_argument("--json", action="store_true", help="print one JSON object instead of the report")
    plan.set_defaults(handler=run_plan)

    plot = _sub(sub, "plot", "draw sodium (measured and projected) and ICP/CPP to a PNG or SVG file")
    plot.add_argument("--out", metavar="FILE", required=True, help="output file name ending in .png or .svg")
    plot.set_defaults(handler=run_plot)


def run_new(args: argparse.Namespace) -> int:
    from osmodose.course.entries import parse_patient
    from osmodose.course.episode import Episode
    from osmodose.course.store import save_episode

    patient = parse_patient(case_fields(args, (*keys("patient"), "label")))
    save_episode(Episode(patient=patient), args.file, create=True)
    print(f"started episode {args.file}")
    return OK


def _added(args: argparse.Namespace, what: str, time: datetime, count: int, kind: str) -> int:
    from osmodose.course.findings import when

    counted = f"{count} {kind}" + ("" if count == 1 else "s")
    print(f"added {what} at {when(time)} to {args.file} ({counted} in all)")
    return OK


def run_add_lab(args: argparse.Namespace) -> int:
    from osmodose.cli.labs_args import require_unless_labs
    from osmodose.course.entries import parse_lab
    from osmodose.course.store import update_episode

    require_unless_labs(args)
    fields = case_fields(args, ("time", *LAB_KEYS))
    if args.labs:
        from osmodose.course.importing import lab_from_file

        entry, lines = lab_from_file(fields, args.labs, datetime.now().astimezone())
        for line in lines:
            print(f"not used: {line}")
    else:
        entry = parse_lab(fields)
    changed = update_episode(args.file, lambda episode: episode.with_entry(entry))
    return _added(args, "lab", entry.time, len(changed.labs), "lab")


def run_import(args: argparse.Namespace) -> int:
    from osmodose.course.importing import import_file
    from osmodose.course.store import read_episode, save_episode
    from osmodose.datain import read_labs_file

    formulary = formulary_from_args(args)
    episode, digest = read_episode(args.file)
    file = read_labs_file(args.bundle)
    changed, report = import_file(episode, file, formulary)
    if report.added:  # nothing new: the file is not even rewritten
        save_episode(changed, args.file, expect_sha256=digest)
    for line in report.lines:
        print(f"not imported: {line}")
    print(
        f"imported from {args.bundle} into {args.file}: {report.labs} lab entr{'y' if report.labs == 1 else 'ies'}, "
        f"{report.readings} reading{'' if report.readings == 1 else 's'}, "
        f"{report.doses} dose{'' if report.doses == 1 else 's'}"
        + (f"; {report.already} already in the episode" if report.already else "")
    )
    return OK


def run_add_dose(args: argparse.Namespace) -> int:
    from osmodose.course.entries import parse_dose_entry
    from osmodose.course.store import update_episode

    entry = parse_dose_entry(formulary_from_args(args), case_fields(args, ("time", "agent", "volume", "duration")))
    changed = update_episode(args.file, lambda episode: episode.with_entry(entry))
    return _added(args, f"dose of {entry.agent_id}", entry.time, len(changed.doses), "dose")


def run_add_reading(args: argparse.Namespace) -> int:
    from osmodose.course.entries import parse_reading
    from osmodose.course.store import update_episode

    entry = parse_reading(case_fields(args, ("time", *keys("reading"))))
    changed = update_episode(args.file, lambda episode: episode.with_entry(entry))
    return _added(args, f"reading (CPP {entry.cpp_mmhg:g} mmHg)", entry.time, len(changed.readings), "reading")


def run_show(args: argparse.Namespace) -> int:
    from osmodose.course.report import render_review_text, review, review_json
    from osmodose.course.store import load_episode

    episode = load_episode(args.file)
    result = review(episode, formulary_from_args(args))
    if args.json:
        print(json.dumps(review_json(result, args.file), indent=2))
    else:
        print(render_review_text(result, args.file), end="")
    return BY_STATUS[result.status]


def run_plan(args: argparse.Namespace) -> int:
    from osmodose.course.plan import plan_dose
    from osmodose.course.report import plan_json, render_plan_text
    from osmodose.course.store import load_episode

    episode = load_episode(args.file)
    plan = plan_dose(episode, formulary_from_args(args), case_fields(args, (*keys("order"), "time")))
    if args.json:
        print(json.dumps(plan_json(plan, args.file), indent=2))
    else:
        print(render_plan_text(plan, args.file), end="")
    return BY_STATUS[plan.status]


def run_plot(args: argparse.Namespace) -> int:
    from osmodose.course.plot import plot_format, write_plot
    from osmodose.course.series import course_series
    from osmodose.course.store import load_episode

    plot_format(args.out)  # a wrong name fails before any work
    episode = load_episode(args.file)
    series = course_series(episode, formulary_from_args(args))
    label = episode.patient.label
    write_plot(series, args.out, title=f"course of therapy: {label}" if label else "course of therapy")
    print(f"wrote {args.out}")
    return OK
