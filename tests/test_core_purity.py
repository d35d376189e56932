"""The core and the check path stay free of the app's and the plots' libraries."""

from __future__ import annotations

import ast
import json
import os
import subprocess
import sys
from pathlib import Path

REPO_ROOT = Path(__file__).resolve().parent.parent
PACKAGE = REPO_ROOT / "osmodose"
HEAVY = ("textual", "matplotlib", "plotext", "textual_plotext")

PROBE = """
import contextlib, io, json, sys
import osmodose, osmodose.check.run, osmodose.cli.main
from osmodose.check.run import run_check
from osmodose.formulary import demo_formulary_path, load_formulary
from osmodose.case.inputs import parse_check_request
fields = {"weight": "70", "age": "40", "sex": "male", "sodium": "140", "agent": "mannitol-20", "dose": "1g/kg"}
run_check(parse_check_request(fields), load_formulary(demo_formulary_path()))
with contextlib.redirect_stdout(io.StringIO()):
    code = osmodose.cli.main.main(["check", "--weight", "70", "--age", "40", "--sex", "male", "--sodium", "110",
                                   "--agent", "nacl-3", "--volume", "250", "--line", "peripheral", "--json"])
heavy = sorted(m for m in sys.modules if m.split(".")[0] in %r or m.startswith("osmodose.app"))
print(json.dumps({"code": code, "heavy": heavy}))
"""


def test_a_check_in_a_fresh_interpreter_imports_no_textual_or_matplotlib() -> None:
    env = dict(os.environ)
    env["PYTHONPATH"] = str(REPO_ROOT) + os.pathsep + env.get("PYTHONPATH", "")
    done = subprocess.run(
        [sys.executable, "-c", PROBE % (HEAVY,)],
        capture_output=True,
        text=True,
        cwd=REPO_ROOT,
        env=env,
        timeout=120,
        check=False,
    )
    assert done.returncode == 0, done.stderr
    report = json.loads(done.stdout.strip().splitlines()[-1])
    assert report["code"] == 3  # the order ran: 3 % on a peripheral line is warned (1027 > 900 mOsm/L)
    assert report["heavy"] == []


def _imported_roots(path: Path) -> set[str]:
    tree = ast.parse(path.read_text(encoding="utf-8"))
    roots = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            roots |= {alias.name.split(".")[0] for alias in node.names}
        elif isinstance(node, ast.ImportFrom) and node.module and node.level == 0:
            roots.add(node.module.split(".")[0])
    return roots


def test_no_core_module_imports_textual_or_matplotlib() -> None:
    # Only the app package may import textual; matplotlib only in the plot writer, inside its function
    # (the probe above shows a check never loads it). The CLI imports heavy things inside handlers.
    allowed = {"course/plot.py": {"matplotlib"}}
    offenders = {
        name: sorted(_imported_roots(path) & set(HEAVY) - allowed.get(name, set()))
        for path in PACKAGE.rglob("*.py")
        if "app" not in path.relative_to(PACKAGE).parts[:1] and path.parent.name != "cli"
        for name in [path.relative_to(PACKAGE).as_posix()]
    }
    assert {name: roots for name, roots in offenders.items() if roots} == {}
