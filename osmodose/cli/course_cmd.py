"""`osmodose course ...`: keep a patient's episode file, review it, plan the next dose, plot it.

Thin shell: parse the options, call `osmodose.course`, print.  The course
modules (and matplotlib, for `plot`) are imported inside the handlers so
registering this command costs nothing at start-up.
"""

from __future__ import annotations

import argparse
import json
from typing import TYPE_CHECKING

from osmodose.cli.commands import help_of
from osmodose.cli.exit_codes import BY_STATUS, OK
from osmodose.cli.formulary_arg import add_formulary_option, formulary_from_args

if TYPE_CHECKING:
    from osmodose.course.episode import Episode

HELP = help_of("course")
TIME_HELP = "ISO 8601 time, e.g. 2026-12-01T08:30+00:00; without an offset = this computer's local time; or now"


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
    ):
        _opt(new, option, text, required)
    new.set_defaults(handler=run_new)

    lab = _sub(sub, "add-lab", "add serum labs drawn at one time", formulary=False)
    _opt(lab, "--time", TIME_HELP, True)
    for option, text, required in (
        ("--sodium", "serum sodium; bare number = mmol/L", True),
        ("--potassium", "serum potassium; bare number = mmol/L", False),
        ("--glucose", "serum glucose; bare number = mmol/L (126mg/dL accepted)", False),
        ("--urea", "serum urea; bare number = mmol/L", False),
        ("--bun", "blood urea nitrogen instead of urea; bare number = mg/dL", False),
        ("--osmolality", "measured serum osmolality; bare number = mOsm/kg", False),
    ):
        _opt(lab, option, text, required)
    lab.set_defaults(handler=run_add_lab)

    dose = _sub(sub, "add-dose", "add a dose given (the agent must be in the formulary)")
    _opt(dose, "--time", TIME_HELP + " (start of the infusion)", True)
    _opt(dose, "--agent", "agent id from the formulary", True)
    _opt(dose, "--volume", "volume given; bare number = mL", True)
    _opt(dose, "--duration", "infusion time; bare number = minutes")
    dose.set_defaults(handler=run_add_dose)

    reading = _sub(sub, "add-reading", "add a bedside reading: MAP and ICP (CPP = MAP - ICP)", formulary=False)
    _opt(reading, "--time", TIME_HELP, True)
    _opt(reading, "--map", "mean arterial pressure; bare number = mmHg", True)
    _opt(reading, "--icp", "intracranial pressure; bare number = mmHg", True)
    reading.set_defaults(handler=run_add_reading)

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
    plot.set_defaults(handler=run_plot)


def run_new(args: argparse.Namespace) -> int:
    from osmodose.course.entries import parse_patient
    from osmodose.course.episode import Episode
    from osmodose.course.store import save_episode

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
    save_episode(Episode(patient=patient), args.file, create=True)
    print(f"started episode {args.file}")
    return OK


def _added(args: argparse.Namespace, what: str, time: object, count: int, kind: str) -> int:
    from osmodose.course.findings import when

    counted = f"{count} {kind}" + ("" if count == 1 else "s")
    print(f"added {what} at {when(time)} to {args.file} ({counted} in all)")  # type: ignore[arg-type]
    return OK


def run_add_lab(args: argparse.Namespace) -> int:
    from osmodose.course.entries import LAB_FIELDS, parse_lab
    from osmodose.course.store import update_episode

    fields = {name: getattr(args, name) for name in ("time", *LAB_FIELDS)}
    added = []

    def change(episode: Episode) -> Episode:
        added.append(parse_lab(episode, fields))
        return episode.with_entry(added[0])

    changed = update_episode(args.file, change)
    return _added(args, "lab", added[0].time, len(changed.labs), "lab")


def run_add_dose(args: argparse.Namespace) -> int:
    from osmodose.course.entries import parse_dose
    from osmodose.course.store import update_episode

    fields = {"time": args.time, "agent": args.agent, "volume": args.volume, "duration": args.duration}
    entry = parse_dose(formulary_from_args(args), fields)
    changed = update_episode(args.file, lambda episode: episode.with_entry(entry))
    return _added(args, f"dose of {entry.agent_id}", entry.time, len(changed.doses), "dose")


def run_add_reading(args: argparse.Namespace) -> int:
    from osmodose.course.entries import parse_reading
    from osmodose.course.store import update_episode

    entry = parse_reading({"time": args.time, "map": args.map, "icp": args.icp})
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
    fields = {name: getattr(args, name) for name in ("agent", "volume", "dose", "duration", "line", "time")}
    plan = plan_dose(episode, formulary_from_args(args), fields)
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
