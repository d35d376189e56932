"""Ctrl+L in the app reads labs from an HL7 FHIR file: empty boxes filled, typed ones kept, same result as check."""

from __future__ import annotations

import contextlib
import io
import json
from pathlib import Path

from textual.widgets import Input

from osmodose.app.screens.labs_file import LabsFileScreen
from osmodose.app.screens.main import MainScreen
from osmodose.cli.main import main
from tests.app.driving import fill, main_screen, make_app, sync
from tests.fhir_build import bundle, morning_labs, patient, write

SIZE = (100, 40)


def check_json(*args: str) -> dict[str, object]:
    out = io.StringIO()
    with contextlib.redirect_stdout(out):
        main(["check", *args, "--json"])
    result: dict[str, object] = json.loads(out.getvalue())
    return result


async def read_file(pilot: object, path: Path) -> None:
    await pilot.press("ctrl+l")  # type: ignore[attr-defined]
    await pilot.pause()  # type: ignore[attr-defined]
    app = pilot.app  # type: ignore[attr-defined]
    assert isinstance(app.screen, LabsFileScreen)
    box = app.screen.query_one("#labs-file-path", Input)
    box.value = str(path)
    await pilot.press("enter")  # type: ignore[attr-defined]
    await pilot.pause()  # type: ignore[attr-defined]


@sync
async def test_the_app_reads_labs_from_a_file_and_keeps_what_was_typed(tmp_path: Path) -> None:
    path = write(tmp_path / "labs.json", bundle(*morning_labs()))
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await fill(pilot, {"glucose": "7", "agent": "nacl-3", "amount": "250 mL", "duration": "30"})
        await read_file(pilot, path)
        screen = main_screen(app)
        assert isinstance(app.screen, MainScreen)
        values = screen.values()
        assert (values["sodium"], values["weight"], values["sex"], values["glucose"]) == (
            "130 meq/L",
            "143 [lb_av]",
            "female",
            "7",
        )
        result = screen.outcome.result
        assert result is not None and result.labs_file is not None
        sodium = result.labs_file.origin("sodium")
        assert sodium is not None and (sodium.source, sodium.resource) == ("file", "Observation/na-2")
        glucose = result.labs_file.origin("glucose")
        assert glucose is not None and glucose.source == "typed"
        panel = screen.query_one("#labs-file")
        assert panel.display
        # The same figures as the command line with the same file and the same typed glucose.
        typed = check_json("--labs", str(path), "--glucose", "7", "--agent", "nacl-3", "--volume", "250",
                           "--duration", "30")  # fmt: skip
        assert result.projected_sodium_mmol_l == typed["projected_sodium_mmol_l"]
        assert result.calculated_osmolality_mosm_kg == typed["calculated_osmolality_mosm_kg"]
        # A new case forgets the file.
        await pilot.press("ctrl+n")
        await pilot.pause()
        assert screen.labs is None and not screen.query_one("#labs-file").display


@sync
async def test_a_file_that_cannot_be_used_is_named_on_the_file_screen(tmp_path: Path) -> None:
    path = tmp_path / "bad.json"
    path.write_text("{", encoding="utf-8")
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await read_file(pilot, path)
        assert isinstance(app.screen, LabsFileScreen)
        message = str(app.screen.query_one("#labs-file-message").render())
        assert f"labs {path}: is not valid JSON" in message
        await pilot.press("escape")
        await pilot.pause()
        assert isinstance(app.screen, MainScreen) and main_screen(app).labs is None


@sync
async def test_an_administrative_gender_leaves_the_sex_to_choose(tmp_path: Path) -> None:
    path = write(tmp_path / "labs.json", bundle(patient(gender="unknown"), *morning_labs()[1:]))
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await read_file(pilot, path)
        screen = main_screen(app)
        assert screen.values()["sex"] == "" and screen.values()["sodium"] == "130 meq/L"
        assert screen.outcome.field == "sex"
        assert "administrative gender unknown" in str(screen.outcome.error)
