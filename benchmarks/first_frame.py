"""Time to the app's first frame and to its figures, under tmux, against a bare Textual app in the same run.

    python benchmarks/first_frame.py [--runs 7]

Not a test (timings depend on the machine and its load): run it by hand.
Each round starts, in turn, in a fresh 80x24 tmux window:

* the floor: `benchmarks/bare_app.py` (a Header, an Input and a Footer);
* `python -m osmodose` (the command a user types: the command line, then the app);
* the app alone (`osmodose.app.launch.launch`, without the command line's parser).

and reads the window (`tmux capture-pane`) every few milliseconds from the
moment the window is asked for.  It records when

* the first frame is up: the form's first field and the footer are on screen
  (the floor: its footer), and the weight box has the focus, so typing works;
* the first key shows: a "7" sent at that moment appears in the weight box
  (the floor: in its input);
* the figures are ready: the status line shows the engine's words for the
  empty form ("INCOMPLETE"), so the formulary is read and valid.

It prints, per command, min and median of each, then min and median of the
pairwise ratios to the floor in the same round.  Targets (issue 11): first
frame <= 1.5x the floor, figures ready <= 2.5x.  Exit status 0 within both
targets (by the median of the command's ratios), 1 above.
"""

from __future__ import annotations

import argparse
import compileall
import os
import re
import statistics
import subprocess
import sys
import time
from dataclasses import dataclass, field
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
SOCKET = f"osmodose-bench-{os.getpid()}"
POLL_S = 0.004
TIMEOUT_S = 30.0
FIRST_FRAME_TARGET, READY_TARGET = 1.5, 2.5


@dataclass(frozen=True)
class Subject:
    name: str
    command: list[str]
    first_frame: tuple[str, ...]
    """Regular expressions that must all match the window for the first frame to be up."""
    typed: str
    """Matches once the "7" sent at the first frame shows."""
    ready: str | None
    """Matches once the figures are ready (None: the first frame is all there is)."""


PY = sys.executable
LAUNCH = "import sys; from osmodose.app.launch import launch; sys.exit(launch(None))"
APP_FRAME = (r"weight", r"\^q quit|ctrl\+q quit|quit\s*$")
SUBJECTS = (
    Subject("bare app (floor)", [PY, str(ROOT / "benchmarks" / "bare_app.py")], (r"quit",), r"│7|▎7|\b7\b", None),
    Subject("osmodose (command)", [PY, "-m", "osmodose"], APP_FRAME, r"weight\s+7\b", r"INCOMPLETE"),
    Subject("app alone (launch)", [PY, "-c", LAUNCH], APP_FRAME, r"weight\s+7\b", r"INCOMPLETE"),
)


@dataclass
class Times:
    first_frame: list[float] = field(default_factory=list)
    typed: list[float] = field(default_factory=list)
    ready: list[float] = field(default_factory=list)


def tmux(*args: str) -> str:
    done = subprocess.run(["tmux", "-L", SOCKET, *args], capture_output=True, text=True, check=False)
    return done.stdout


def run_once(subject: Subject, env: dict[str, str]) -> tuple[float, float, float]:
    """(first frame, first key shown, figures ready) in seconds from asking for the window."""
    command = " ".join(f"'{part}'" for part in subject.command)
    start = time.perf_counter()
    tmux("new-session", "-d", "-s", "run", "-x", "80", "-y", "24", "-c", str(ROOT), f"exec {command}")
    first = typed = ready = 0.0
    try:
        while True:
            now = time.perf_counter() - start
            if now > TIMEOUT_S:
                raise SystemExit(f"{subject.name}: nothing after {TIMEOUT_S:.0f} s:\n{tmux('capture-pane', '-p')}")
            screen = tmux("capture-pane", "-p", "-t", "run")
            if not first and all(re.search(p, screen, re.MULTILINE) for p in subject.first_frame):
                first = now
                tmux("send-keys", "-t", "run", "7")
            if first and not typed and re.search(subject.typed, screen):
                typed = now
            if first and not ready and (subject.ready is None or re.search(subject.ready, screen)):
                ready = now
            if first and typed and ready:
                return first, typed, ready
            time.sleep(POLL_S)
    finally:
        tmux("kill-session", "-t", "run")


def summary(values: list[float]) -> str:
    return f"min {min(values):6.3f}  median {statistics.median(values):6.3f}"


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=7, help="rounds (default 7)")
    args = parser.parse_args(argv)
    compileall.compile_dir(ROOT / "osmodose", quiet=1)  # as an installed package is
    env = dict(os.environ)
    env["PYTHONPATH"] = str(ROOT) + os.pathsep + env.get("PYTHONPATH", "")
    # A server kept up by a session of its own, so no run pays for starting it.
    subprocess.run(["tmux", "-L", SOCKET, "-f", "/dev/null", "new-session", "-d", "-s", "keep", "cat"], env=env,
                   check=True)  # fmt: skip
    for key, value in env.items():
        tmux("set-environment", "-g", key, value)
    times = {s.name: Times() for s in SUBJECTS}
    try:
        for subject in SUBJECTS:  # warm-up: caches (pint's too) and the OS file cache
            run_once(subject, env)
        for _ in range(args.runs):
            for subject in SUBJECTS:
                first, typed, ready = run_once(subject, env)
                times[subject.name].first_frame.append(first)
                times[subject.name].typed.append(typed)
                times[subject.name].ready.append(ready)
    finally:
        tmux("kill-server")
    floor = times[SUBJECTS[0].name]
    print(f"app first frame under tmux, 80x24, {args.runs} rounds (seconds from asking for the window)")
    for subject in SUBJECTS:
        t = times[subject.name]
        print(f"{subject.name:20s} first frame {summary(t.first_frame)} | first key shown {summary(t.typed)}"
              f" | figures ready {summary(t.ready)}")  # fmt: skip
    within = True
    for subject in SUBJECTS[1:]:
        t = times[subject.name]
        frame = [a / b for a, b in zip(t.first_frame, floor.first_frame, strict=True)]
        ready = [a / b for a, b in zip(t.ready, floor.first_frame, strict=True)]
        print(f"{subject.name:20s} / floor: first frame {summary(frame)} (target <= {FIRST_FRAME_TARGET})"
              f" | figures ready {summary(ready)} (target <= {READY_TARGET})")  # fmt: skip
        within = within and statistics.median(frame) <= FIRST_FRAME_TARGET
        within = within and statistics.median(ready) <= READY_TARGET
    return 0 if within else 1


if __name__ == "__main__":
    raise SystemExit(main())
