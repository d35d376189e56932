"""`osmodose course ...`: keep a patient's episode file, review it, plan the next dose, plot it.

Thin shell: parse the options, call `osmodose.course`, print.  The course
modules (and matplotlib, for `plot`) are imported inside the handlers so
registering this command costs nothing at start-up.
"""

from __future__ import annotations

import argparse
import sys
from collections.abc import Callable
from datetime import datetime
from typing import TYPE_CHECKING, Any

from osmodose.case.fields import FIELDS, LAB_KEYS, keys
from osmodose.cli.commands import help_of
from osmodose.cli.emit import emit
from osmodose.cli.exit_codes import BY_STATUS, DONE_EPILOG, OK, STATUS_EPILOG
from osmodose.cli.formulary_arg import add_formulary_option, formulary_from_args
from osmodose.cli.parsers import described
from osmodose.cli.patient_args import add_field_options, case_fields
from osmodose.safe_text import escape_controls

if TYPE_CHECKING:
    from osmodose.course.episode import Entry, Episode

HELP = help_of("course")
#: The fields of `course add-output`, keyed as the field table keys them (as `entries.OUTPUT_KEYS`).
OUTPUT_OPTIONS = ("time", "urine-volume", "urine-sodium", "urine-potassium", "over")
MAX_AGE_HELP = "how far back a time may be; bare number = days (default 30)"
#: What `course amend` can change, by the field table's keys (each entry kind takes its own).
AMEND_KEYS = ("time", *LAB_KEYS, "agent", "volume", "duration", *keys("reading"), *OUTPUT_OPTIONS[1:])


def note(text: str) -> None:
    """Something worth saying that is not an error (a stale temporary file removed): one line on stderr."""
    sys.stderr.write(f"osmodose: note: {escape_controls(text)}\n")


def _max_age(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("--max-age", metavar="VALUE", default=None, help=MAX_AGE_HELP)


def _sub(
    subparsers: argparse._SubParsersAction, name: str, text: str, formulary: bool = True, epilog: str = DONE_EPILOG
) -> argparse.ArgumentParser:
    parser = described(subparsers, name, text, epilog)
    parser.add_argument("file", metavar="FILE", help="the episode file (JSON)")
    if formulary:
        add_formulary_option(parser)
    return parser


def register(subparsers: argparse._SubParsersAction) -> None:
    course = described(subparsers, "course", HELP, STATUS_EPILOG, " Decision support only.")
    sub = course.add_subparsers(title="course commands", metavar="COMMAND", required=True)

    new = _sub(sub, "new", "start an episode file for one patient", formulary=False)
    add_field_options(new, (*keys("patient"), "label"), required=("weight", "age", "sex"))
    new.add_argument(
        "--start", metavar="TIME", default=None, help="when the episode began; no entry may be earlier (ISO 8601)"
    )
    _max_age(new)
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
    _max_age(lab)
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
    _max_age(dose)
    dose.set_defaults(handler=run_add_dose)

    reading = _sub(sub, "add-reading", "add a bedside reading: MAP and ICP (CPP = MAP - ICP)", formulary=False)
    add_field_options(reading, ("time", *keys("reading")), required=("time", *keys("reading")))
    _max_age(reading)
    reading.set_defaults(handler=run_add_reading)

    output = _sub(
        sub, "add-output", "add a urine output: its volume, and its sodium and potassium when measured", formulary=False
    )
    add_field_options(
        output,
        OUTPUT_OPTIONS,
        required=("time", "urine-volume"),
        help_for={
            "time": FIELDS["time"].help + " (the end of the collection)",
            "urine-volume": "urine volume; bare number = mL (e.g. 800, 1.2L)",
            "urine-sodium": "urine sodium; bare number = mmol/L (without it the output stays out of the balance)",
            "urine-potassium": "urine potassium; bare number = mmol/L (not given: taken as 0)",
            "over": "the collection period ending at --time; bare number = minutes (e.g. 60, 4h); "
            "without it the output counts at --time",
        },
        option_for={"urine-volume": "--volume", "urine-sodium": "--sodium", "urine-potassium": "--potassium"},
    )
    _max_age(output)
    output.set_defaults(handler=run_add_output)

    amend = _sub(sub, "amend", "correct an entry's values, keeping the old ones, who, when and why in the file")
    amend.add_argument("entry", metavar="ENTRY-ID", help="the entry's id as course show lists it (L3, D1, R2, U1)")
    add_field_options(
        amend,
        AMEND_KEYS,
        help_for={key: FIELDS[key].help + "; none clears an optional value" for key in AMEND_KEYS},
        option_for={"urine-volume": "--urine-volume"},
    )
    amend.add_argument("--reason", metavar="TEXT", required=True, help="why the entry is corrected (8 characters+)")
    amend.add_argument("--initials", metavar="XX", required=True, help="the initials of who corrects it")
    _max_age(amend)
    amend.set_defaults(handler=run_amend)

    remove = _sub(sub, "remove", "take an entry out of the course, keeping it, who, when and why in the file", False)
    remove.add_argument("entry", metavar="ENTRY-ID", help="the entry's id as course show lists it (L3, D1, R2, U1)")
    remove.add_argument("--reason", metavar="TEXT", required=True, help="why the entry is removed (8 characters+)")
    remove.add_argument("--initials", metavar="XX", required=True, help="the initials of who removes it")
    remove.set_defaults(handler=run_remove)

    show = _sub(sub, "show", "the timeline table and the findings across the course", epilog=STATUS_EPILOG)
    show.add_argument("--json", action="store_true", help="print one JSON object instead of the table")
    show.set_defaults(handler=run_show)

    plan = _sub(
        sub,
        "plan",
        "what the next dose would do, projected from the latest sodium and the doses since",
        epilog=STATUS_EPILOG,
    )
    add_field_options(plan, keys("order"), required=("agent",))
    add_field_options(plan, ("time",), help_for={"time": FIELDS["time"].help + " (default: now)"})
    plan.add_argument("--json", action="store_true", help="print one JSON object instead of the report")
    plan.set_defaults(handler=run_plan)

    plot = _sub(sub, "plot", "draw sodium (measured and projected) and ICP/CPP to a PNG or SVG file")
    plot.add_argument("--out", metavar="FILE", required=True, help="output file name ending in .png or .svg")
    plot.add_argument("--force", action="store_true", help="replace the --out file if it exists")
    plot.set_defaults(handler=run_plot)


def run_new(args: argparse.Namespace) -> int:
    from osmodose.course.entries import parse_patient, parse_time
    from osmodose.course.store import save_episode
    from osmodose.course.times import new_episode, parse_max_age

    max_age = parse_max_age(args.max_age)
    patient = parse_patient(case_fields(args, (*keys("patient"), "label")))
    started = parse_time(args.start, "start") if args.start else None
    save_episode(new_episode(patient, started, max_age), args.file, create=True, note=note)
    print(escape_controls(f"started episode {args.file}"))
    return OK


def _added(args: argparse.Namespace, what: str, entry: Entry, changed: Episode, kind: str) -> int:
    from osmodose.course.findings import when
    from osmodose.course.times import display_offset

    count = len(getattr(changed, kind + "s"))
    counted = f"{count} {kind}" + ("" if count == 1 else "s")
    time = entry.time.astimezone(display_offset(changed))
    print(escape_controls(f"added {what} {entry.id} at {when(time)} to {args.file} ({counted} in all)"))
    return OK


def _adding(entry_of: Callable[[Episode], Entry], max_age: object, added: list[Any]) -> Callable[[Episode], Episode]:
    """The change that adds an entry: made from the file as it is under the lock, its time checked."""
    from osmodose.course.times import check_entry_time, parse_max_age

    span = parse_max_age(max_age)

    def change(episode: Episode) -> Episode:
        entry = entry_of(episode)
        check_entry_time(episode, entry.time, "time", span)
        changed = episode.with_entry(entry)
        before = {e.id for e in episode.entries()}
        added.extend(e for e in changed.entries() if e.id not in before)
        return changed

    return change


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
            print(escape_controls(f"not used: {line}"))
    else:
        entry = parse_lab(fields)
    added: list[Any] = []
    changed = update_episode(args.file, _adding(lambda _ep: entry, args.max_age, added), note)
    return _added(args, "lab", added[0], changed, "lab")


def run_import(args: argparse.Namespace) -> int:
    from osmodose.course.importing import import_file
    from osmodose.course.store import read_episode, save_episode
    from osmodose.datain import read_labs_file

    formulary = formulary_from_args(args)
    episode, digest = read_episode(args.file)
    file = read_labs_file(args.bundle)
    changed, report = import_file(episode, file, formulary)
    if report.added:  # nothing new: the file is not even rewritten
        save_episode(changed, args.file, expect_sha256=digest, note=note)
    for line in report.lines:
        print(escape_controls(f"not imported: {line}"))
    print(
        escape_controls(
            f"imported from {args.bundle} into {args.file}: "
            f"{report.labs} lab entr{'y' if report.labs == 1 else 'ies'}, "
            f"{report.readings} reading{'' if report.readings == 1 else 's'}, "
            f"{report.doses} dose{'' if report.doses == 1 else 's'}"
            + (f"; {report.already} already in the episode" if report.already else "")
        )
    )
    return OK


def run_add_dose(args: argparse.Namespace) -> int:
    from osmodose.course.entries import parse_dose_entry
    from osmodose.course.store import update_episode

    entry = parse_dose_entry(formulary_from_args(args), case_fields(args, ("time", "agent", "volume", "duration")))
    added: list[Any] = []
    changed = update_episode(args.file, _adding(lambda _ep: entry, args.max_age, added), note)
    return _added(args, f"dose of {entry.agent_id}", added[0], changed, "dose")


def run_add_reading(args: argparse.Namespace) -> int:
    from osmodose.course.entries import parse_reading
    from osmodose.course.store import update_episode

    entry = parse_reading(case_fields(args, ("time", *keys("reading"))))
    added: list[Any] = []
    changed = update_episode(args.file, _adding(lambda _ep: entry, args.max_age, added), note)
    return _added(args, f"reading (CPP {entry.cpp_mmhg:g} mmHg)", added[0], changed, "reading")


def run_add_output(args: argparse.Namespace) -> int:
    from osmodose.course.entries import parse_output
    from osmodose.course.store import update_episode

    entry = parse_output(case_fields(args, OUTPUT_OPTIONS))
    added: list[Any] = []
    changed = update_episode(args.file, _adding(lambda _ep: entry, args.max_age, added), note)
    return _added(args, f"urine output of {entry.volume_ml:g} mL", added[0], changed, "output")


def run_amend(args: argparse.Namespace) -> int:
    from osmodose.course.corrections import amend_entry, find_entry
    from osmodose.course.store import load_episode, update_episode
    from osmodose.course.times import parse_max_age

    changes = case_fields(args, AMEND_KEYS)
    max_age = parse_max_age(args.max_age)
    kind, _entry = find_entry(load_episode(args.file), args.entry)
    formulary = formulary_from_args(args) if kind == "dose" else None

    def change(episode: Episode) -> Episode:
        return amend_entry(episode, args.entry, changes, args.initials, args.reason, formulary, max_age=max_age)

    update_episode(args.file, change, note)
    print(escape_controls(f"amended {kind} {args.entry.strip().upper()} in {args.file}; the old values are kept in it"))
    return OK


def run_remove(args: argparse.Namespace) -> int:
    from osmodose.course.corrections import find_entry, remove_entry
    from osmodose.course.store import update_episode

    found: list[str] = []

    def change(episode: Episode) -> Episode:
        found.append(find_entry(episode, args.entry)[0])
        return remove_entry(episode, args.entry, args.initials, args.reason)

    update_episode(args.file, change, note)
    entry_id = args.entry.strip().upper()
    print(escape_controls(f"removed {found[0]} {entry_id} from the course in {args.file}; it is kept there as removed"))
    return OK


def run_show(args: argparse.Namespace) -> int:
    from osmodose.course.report import render_review_text, review, review_json
    from osmodose.course.store import load_episode

    episode = load_episode(args.file)
    result = review(episode, formulary_from_args(args))
    emit(lambda: review_json(result, args.file), lambda: render_review_text(result, args.file), args.json)
    return BY_STATUS[result.status]


def run_plan(args: argparse.Namespace) -> int:
    from osmodose.course.plan import plan_dose
    from osmodose.course.report import plan_json, render_plan_text
    from osmodose.course.store import load_episode
    from osmodose.course.times import in_display_offset

    episode = in_display_offset(load_episode(args.file))
    plan = plan_dose(episode, formulary_from_args(args), case_fields(args, (*keys("order"), "time")))
    emit(lambda: plan_json(plan, args.file), lambda: render_plan_text(plan, args.file), args.json)
    return BY_STATUS[plan.status]


def run_plot(args: argparse.Namespace) -> int:
    from osmodose.course.plot import plot_format, write_plot
    from osmodose.course.series import course_series
    from osmodose.course.store import load_episode

    plot_format(args.out)  # a wrong name fails before any work
    episode = load_episode(args.file)
    series = course_series(episode, formulary_from_args(args))
    label = episode.patient.label
    title = f"course of therapy: {label}" if label else "course of therapy"
    write_plot(series, args.out, title=title, overwrite=args.force)
    print(escape_controls(f"wrote {args.out}"))
    return OK
