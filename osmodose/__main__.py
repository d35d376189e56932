"""`python -m osmodose` runs the same entry point as the `osmodose` command."""

from __future__ import annotations

import sys

from osmodose.cli.main import main

sys.exit(main())
