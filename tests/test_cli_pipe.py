"""Output piped into a reader that has gone (`| head`) ends quietly, without a traceback."""

from __future__ import annotations

import os
import subprocess
import sys

from tests.conftest import REPO_ROOT


def test_a_reader_that_has_gone_gets_no_traceback_and_status_141() -> None:
    env = dict(os.environ)
    env["PYTHONPATH"] = str(REPO_ROOT) + os.pathsep + env.get("PYTHONPATH", "")
    with subprocess.Popen(
        [sys.executable, "-m", "osmodose", "formulary", "schema"],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        cwd=REPO_ROOT,
        env=env,
    ) as process:
        assert process.stdout is not None and process.stderr is not None
        process.stdout.close()  # the reader is gone before the first write: that write fails
        err = process.stderr.read().decode()
        code = process.wait(timeout=120)
    assert err == ""
    assert code == 141  # 128 + SIGPIPE, what a shell reports for a closed pipe
