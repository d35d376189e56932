"""`osmodose course ...`: keep a patient's episode file, review it, plan the next dose, plot it.

Thin shell: parse the options, call `osmodose.course`, print.  The course
modules (and matplotlib, for `plot`) are imported inside the handlers so
registering this command costs nothing at start-up.
"""

from __future__ import annotations

import argparse
import json
import sys
from collections.abc import Callable
from typing import TYPE_CHECKING, Any

from osmodose.cli.exit_codes import BY_STATUS, OK
from osmodose.cli.formulary_arg import add_formulary_option, formulary_from_args
from osmodose.safe_text import escape_controls

if TYPE_CHECKING:
    from osmodose.course.episode import Episode


def note(text: str) -> None:
    """Something worth saying that is not an error (a stale temporary file removed): one line on stderr."""
    sys.stderr.write(f"osmodose: note: {escape_controls(text)}\n")


HELP = "a course of therapy: serial labs, doses and pressures in an episode file"
TIME_HELP = "ISO 8601 time, e.g. 2026-12-01T08:30+00:00; without an offset = this computer's local time; or now"
MAX_AGE_HELP = "how far back a time may be; bare number = days (default 30)"
LAB_OPTIONS = (
    ("--sodium", "serum sodium; bare number = mmol/L"),
    ("--potassium", "serum potassium; bare number = mmol/L"),
    ("--glucose", "serum glucose; bare number = mmol/L (126mg/dL accepted)"),
    ("--urea", "serum urea; bare number = mmol/L"),
    ("--bun", "blood urea nitrogen instead of urea; bare number = mg/dL"),
    ("--osmolality", "measured serum osmolality; bare number = mOsm/kg"),
)


def _sub(
    subparsers: argparse._SubParsersAction, name: str, text: str, formulary: bool = True
) -> argparse.ArgumentParser:
    parser = subparsers.add_parser(name, help=text, description=text + ".")
    parser.add_argument("file", metavar="FILE", help="the episode file (JSON)")
    if formulary:
        add_formulary_option(parser)
    return parser


def _opt(parser: argparse.ArgumentParser, option: str, text: str, required: bool = False) -> None:
    parser.add_argument(option, metavar="VALUE", required=required, help=text)


def register(subparsers: argparse._SubParsersAction) -> None:
    course = subparsers.add_parser("course", help=HELP, description=HELP + ". Decision support only.")
    sub = course.add_subparsers(title="course commands", metavar="COMMAND", required=True)

    new = _sub(sub, "new", "start an episode file for one patient", formulary=False)
    for option, text, required in (
        ("--weight", "body weight; bare number = kg", True),
        ("--age", "age; bare number = years", True),
        ("--sex", "female or male", True),
        ("--height", "height; bare number = cm (needed for --tbw-method watson)", False),
        ("--tbw-method", "fraction or watson (default: the formulary's)", False),
        ("--label", "free text to tell episodes apart (bed, initials)", False),
        ("--start", "when the episode began (" + TIME_HELP + "); no entry may be earlier", False),
        ("--max-age", MAX_AGE_HELP, False),
    ):
        _opt(new, option, text, required)
    new.set_defaults(handler=run_new)

    lab = _sub(sub, "add-lab", "add serum labs drawn at one time", formulary=False)
    _opt(lab, "--time", TIME_HELP, True)
    for option, text in LAB_OPTIONS:
        _opt(lab, option, text, option == "--sodium")
    _opt(lab, "--max-age", MAX_AGE_HELP)
    lab.set_defaults(handler=run_add_lab)

    dose = _sub(sub, "add-dose", "add a dose given (the agent must be in the formulary)")
    _opt(dose, "--time", TIME_HELP + " (start of the infusion)", True)
    _opt(dose, "--agent", "agent id from the formulary", True)
    _opt(dose, "--volume", "volume given; bare number = mL", True)
    _opt(dose, "--duration", "infusion time; bare number = minutes")
    _opt(dose, "--max-age", MAX_AGE_HELP)
    dose.set_defaults(handler=run_add_dose)

    reading = _sub(sub, "add-reading", "add a bedside reading: MAP and ICP (CPP = MAP - ICP)", formulary=False)
    _opt(reading, "--time", TIME_HELP, True)
    _opt(reading, "--map", "mean arterial pressure; bare number = mmHg", True)
    _opt(reading, "--icp", "intracranial pressure; bare number = mmHg", True)
    _opt(reading, "--max-age", MAX_AGE_HELP)
    reading.set_defaults(handler=run_add_reading)

    amend = _sub(sub, "amend", "correct an entry's values, keeping the old ones, who, when and why in the file")
    amend.add_argument("entry", metavar="ENTRY-ID", help="the entry's id as course show lists it (L3, D1, R2)")
    _opt(amend, "--time", TIME_HELP)
    for option, text in (
        *LAB_OPTIONS,
        ("--agent", "agent id from the formulary (a dose)"),
        ("--volume", "volume given; bare number = mL (a dose)"),
        ("--duration", "infusion time; bare number = minutes (a dose)"),
        ("--map", "mean arterial pressure; bare number = mmHg (a reading)"),
        ("--icp", "intracranial pressure; bare number = mmHg (a reading)"),
    ):
        _opt(amend, option, text + "; none clears an optional value")
    _opt(amend, "--reason", "why the entry is corrected (at least 8 characters)", True)
    _opt(amend, "--initials", "the initials of who corrects it", True)
    _opt(amend, "--max-age", MAX_AGE_HELP)
    amend.set_defaults(handler=run_amend)

    remove = _sub(sub, "remove", "take an entry out of the course, keeping it, who, when and why in the file", False)
    remove.add_argument("entry", metavar="ENTRY-ID", help="the entry's id as course show lists it (L3, D1, R2)")
    _opt(remove, "--reason", "why the entry is removed (at least 8 characters)", True)
    _opt(remove, "--initials", "the initials of who removes it", True)
    remove.set_defaults(handler=run_remove)

    show = _sub(sub, "show", "the timeline table and the findings across the course")
    show.add_argument("--json", action="store_true", help="print one JSON object instead of the table")
    show.set_defaults(handler=run_show)

    plan = _sub(sub, "plan", "what the next dose would do, projected from the latest sodium and the doses since")
    _opt(plan, "--agent", "agent id from the formulary", True)
    _opt(plan, "--volume", "volume; bare number = mL")
    _opt(plan, "--dose", "instead of --volume: per kg (1g/kg) or absolute (50g)")
    _opt(plan, "--duration", "infusion time; bare number = minutes")
    _opt(plan, "--line", "central or peripheral; without it no line check")
    _opt(plan, "--time", TIME_HELP + " (default: now)")
    plan.add_argument("--json", action="store_true", help="print one JSON object instead of the report")
    plan.set_defaults(handler=run_plan)

    plot = _sub(sub, "plot", "draw sodium (measured and projected) and ICP/CPP to a PNG or SVG file")
    plot.add_argument("--out", metavar="FILE", required=True, help="output file name ending in .png or .svg")
    plot.add_argument("--force", action="store_true", help="replace FILE if it exists")
    plot.set_defaults(handler=run_plot)


def run_new(args: argparse.Namespace) -> int:
    from osmodose.course.entries import parse_patient, parse_time
    from osmodose.course.store import save_episode
    from osmodose.course.times import new_episode, parse_max_age

    max_age = parse_max_age(args.max_age)
    patient = parse_patient(
        {
            "weight": args.weight,
            "age": args.age,
            "sex": args.sex,
            "height": args.height,
            "tbw-method": args.tbw_method,
            "label": args.label,
        }
    )
    started = parse_time(args.start, "start") if args.start else None
    save_episode(new_episode(patient, started, max_age), args.file, create=True, note=note)
    print(escape_controls(f"started episode {args.file}"))
    return OK


def _added(args: argparse.Namespace, what: str, entry: object, changed: Episode, kind: str) -> int:
    from osmodose.course.findings import when
    from osmodose.course.times import display_offset

    count = len(getattr(changed, kind + "s"))
    counted = f"{count} {kind}" + ("" if count == 1 else "s")
    time = entry.time.astimezone(display_offset(changed))  # type: ignore[attr-defined]
    print(escape_controls(f"added {what} {entry.id} at {when(time)} to {args.file} ({counted} in all)"))  # type: ignore[attr-defined]
    return OK


def _adding(entry_of: Callable[[Episode], Any], max_age: object, added: list[Any]) -> Callable[[Episode], Episode]:
    """The change that adds an entry: made from the file as it is under the lock, its time checked."""
    from osmodose.course.times import check_entry_time, parse_max_age

    span = parse_max_age(max_age)

    def change(episode: Episode) -> Episode:
        entry = entry_of(episode)
        check_entry_time(episode, entry.time, "time", span)
        changed = episode.with_entry(entry)
        before = {e.id for e in (*episode.labs, *episode.doses, *episode.readings)}
        added.extend(e for e in (*changed.labs, *changed.doses, *changed.readings) if e.id not in before)
        return changed

    return change


def run_add_lab(args: argparse.Namespace) -> int:
    from osmodose.course.entries import LAB_FIELDS, parse_lab
    from osmodose.course.store import update_episode

    fields = {name: getattr(args, name) for name in ("time", *LAB_FIELDS)}
    added: list[Any] = []
    changed = update_episode(args.file, _adding(lambda ep: parse_lab(ep, fields), args.max_age, added), note)
    return _added(args, "lab", added[0], changed, "lab")


def run_add_dose(args: argparse.Namespace) -> int:
    from osmodose.course.entries import parse_dose
    from osmodose.course.store import update_episode

    fields = {"time": args.time, "agent": args.agent, "volume": args.volume, "duration": args.duration}
    entry = parse_dose(formulary_from_args(args), fields)
    added: list[Any] = []
    changed = update_episode(args.file, _adding(lambda _ep: entry, args.max_age, added), note)
    return _added(args, f"dose of {entry.agent_id}", added[0], changed, "dose")


def run_add_reading(args: argparse.Namespace) -> int:
    from osmodose.course.entries import parse_reading
    from osmodose.course.store import update_episode

    entry = parse_reading({"time": args.time, "map": args.map, "icp": args.icp})
    added: list[Any] = []
    changed = update_episode(args.file, _adding(lambda _ep: entry, args.max_age, added), note)
    return _added(args, f"reading (CPP {entry.cpp_mmhg:g} mmHg)", added[0], changed, "reading")


AMEND_FIELDS = ("time", "sodium", "potassium", "glucose", "urea", "bun", "osmolality", "agent", "volume", "duration",
                "map", "icp")  # fmt: skip


def run_amend(args: argparse.Namespace) -> int:
    from osmodose.course.corrections import amend_entry, find_entry
    from osmodose.course.store import load_episode, update_episode
    from osmodose.course.times import parse_max_age

    changes = {name: getattr(args, name) for name in AMEND_FIELDS}
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
    if args.json:
        print(json.dumps(review_json(result, args.file), indent=2))
    else:
        print(escape_controls(render_review_text(result, args.file), keep_lines=True), end="")
    return BY_STATUS[result.status]


def run_plan(args: argparse.Namespace) -> int:
    from osmodose.course.plan import plan_dose
    from osmodose.course.report import plan_json, render_plan_text
    from osmodose.course.store import load_episode
    from osmodose.course.times import in_display_offset

    episode = in_display_offset(load_episode(args.file))
    fields = {name: getattr(args, name) for name in ("agent", "volume", "dose", "duration", "line", "time")}
    plan = plan_dose(episode, formulary_from_args(args), fields)
    if args.json:
        print(json.dumps(plan_json(plan, args.file), indent=2))
    else:
        print(escape_controls(render_plan_text(plan, args.file), keep_lines=True), end="")
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
