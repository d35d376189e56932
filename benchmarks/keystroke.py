"""How long one keystroke takes to settle in the app, against the same key in a bare Textual app, headless.

    python benchmarks/keystroke.py [--rounds 5] [--keys 40]

Not a test (timings depend on the machine and its load): run it by hand.
Each round drives, in turn, headless at 80x24 (Textual's own test driver):

* the floor: `benchmarks/bare_app.py` (a Header, an Input and a Footer),
  typing a digit into its input and taking it out again;
* the check screen with a whole case on the form (mannitol 1 g/kg over 20
  min), typing a digit after the duration and taking it out again (20, 205,
  20 ...): every key changes the figures (the rate), so every key runs the
  whole check.

A key is settled once every message it caused is handled and the screen has
nothing left to lay out or repaint.  It prints, per app, min and median of
the wall time per key and of the process time per key, and the median of
the difference app - floor per round.  Target (issue 11): a key settles
<= 30 ms later than in the floor.  Exit status 0 within it, 1 above.
"""

from __future__ import annotations

import argparse
import asyncio
import statistics
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "benchmarks"))

from bare_app import BareApp  # noqa: E402
from textual import events  # noqa: E402
from textual.app import App  # noqa: E402
from textual.pilot import Pilot  # noqa: E402
from textual.widgets import Input  # noqa: E402

from osmodose.app.app import OsmodoseApp  # noqa: E402
from osmodose.app.screens.main import MainScreen  # noqa: E402
from osmodose.formulary import demo_formulary_path, load_formulary  # noqa: E402

TARGET_MS = 30.0
SIZE = (80, 24)
#: An invented case (the demo's): 70 kg man, mannitol 20 % 1 g/kg over 20 min.
CASE = {"weight": "70", "age": "45", "sex": "male", "sodium": "141", "glucose": "6", "urea": "5",
        "osmolality": "300", "agent": "mannitol-20", "amount": "1 g/kg", "duration": "20"}  # fmt: skip


def busy(app: App[None]) -> bool:
    """A message still queued anywhere on screen, or a layout or repaint still to do (textual 8.2 internals)."""
    screen = app.screen
    if screen._layout_required or screen._repaint_required or screen._dirty_widgets or screen._callbacks:
        return True
    return any(node._message_queue.qsize() for node in (app, *screen.walk_children(with_self=True)))


async def settle(app: App[None]) -> None:
    """Until nothing is queued and nothing is left to lay out or paint, twice in a row half a millisecond apart."""
    quiet = 0
    while quiet < 2:
        await asyncio.sleep(0.0005)
        quiet = 0 if busy(app) else quiet + 1


def press(app: App[None], key: str) -> None:
    """The key as the terminal driver delivers it (not Pilot.press, which also sleeps until the CPU is idle)."""
    char = {"backspace": None}.get(key, key)
    event = events.Key(key, char)
    event.set_sender(app)
    assert app._driver is not None
    app._driver.send_message(event)


async def type_keys(app: App[None], focus: str, keys: int, prepare: object = None) -> tuple[list[float], list[float]]:
    """(wall, cpu) seconds per key: a digit, then backspace, and so on."""
    wall: list[float] = []
    cpu: list[float] = []
    async with app.run_test(size=SIZE) as pilot:
        if prepare is not None:
            await prepare(pilot)  # type: ignore[operator]
        box = app.screen.query_one(focus, Input)
        box.focus()
        box.cursor_blink = False
        await pilot.pause()
        box.action_end()  # focus selects the text: without this the first key would replace it
        await settle(app)
        for i in range(keys):
            key = "5" if i % 2 == 0 else "backspace"
            w0, c0 = time.perf_counter(), time.process_time()
            press(app, key)
            await settle(app)
            wall.append(time.perf_counter() - w0)
            cpu.append(time.process_time() - c0)
    return wall, cpu


async def fill_case(pilot: Pilot[None]) -> None:
    screen = pilot.app.screen
    assert isinstance(screen, MainScreen)
    for key, text in CASE.items():
        screen.field(key).control.value = text
    await pilot.pause()
    assert screen.outcome is not None and screen.outcome.result is not None, screen.outcome


def ms(values: list[float]) -> str:
    return f"min {1000 * min(values):6.1f} ms  median {1000 * statistics.median(values):6.1f} ms"


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rounds", type=int, default=5, help="rounds of both apps (default 5)")
    parser.add_argument("--keys", type=int, default=40, help="keys per app per round (default 40)")
    args = parser.parse_args(argv)
    formulary = load_formulary(demo_formulary_path())
    floor_wall: list[float] = []
    floor_cpu: list[float] = []
    app_wall: list[float] = []
    app_cpu: list[float] = []
    later: list[float] = []
    for _ in range(args.rounds):
        fw, fc = asyncio.run(type_keys(BareApp(), "#bare-input", args.keys))
        aw, ac = asyncio.run(type_keys(OsmodoseApp(formulary), "#field-duration", args.keys, fill_case))
        floor_wall += fw
        floor_cpu += fc
        app_wall += aw
        app_cpu += ac
        later.append(statistics.median(aw) - statistics.median(fw))
    print(f"one keystroke, headless 80x24, {args.rounds} rounds x {args.keys} keys")
    print(f"bare app (floor)  wall {ms(floor_wall)} | cpu {ms(floor_cpu)}")
    print(f"check screen      wall {ms(app_wall)} | cpu {ms(app_cpu)}")
    print(f"later than the floor (median per round): min {1000 * min(later):.1f} ms  "
          f"median {1000 * statistics.median(later):.1f} ms (target <= {TARGET_MS:.0f} ms)")  # fmt: skip
    return 0 if 1000 * statistics.median(later) <= TARGET_MS else 1


if __name__ == "__main__":
    raise SystemExit(main())
