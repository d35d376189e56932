"""The verification screen driven as a user does, at 80x24: F3, the order as written, accept, save to the log."""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from textual.widgets import Checkbox, Input, Static
from textual.widgets._footer import FooterKey

from osmodose.app.screens.main import MainScreen
from osmodose.app.screens.save import SaveScreen
from osmodose.app.screens.verify import NOT_SAVED_YET, VerifyScreen
from osmodose.cli.main import main
from osmodose.verify import read_log, verify_chain
from osmodose.verify.decision import NOT_ACCEPTABLE
from tests.app.driving import (
    PERIPHERAL_SALINE,
    PERIPHERAL_SALINE_ARGS,
    TEN_FOLD_MANNITOL,
    VEIN_REASON,
    VERIFY_PATIENT,
    VERIFY_PATIENT_ARGS,
    fill,
    main_screen,
    make_app,
    open_verification,
    sync,
    tick,
    type_into,
)

SIZE = (80, 24)


def verify_screen(app: object) -> VerifyScreen:
    screen = app.screen  # type: ignore[attr-defined]
    assert isinstance(screen, VerifyScreen)
    return screen


def shown(screen: VerifyScreen, widget_id: str) -> str:
    return str(screen.query_one(f"#{widget_id}", Static).render())


@sync
async def test_ten_fold_mannitol_order_is_refused_and_the_refusal_has_no_accept_box() -> None:
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await open_verification(pilot, VERIFY_PATIENT, TEN_FOLD_MANNITOL, initials="AB", typed=False)
        screen = verify_screen(app)
        assert screen.verification is not None
        assert screen.verification.outcome == "refused"
        status = screen.query_one("#verify-status", Static)
        assert str(status.render()).startswith("✖ REFUSED")
        assert status.has_class("-refuse")
        # Mannitol 20 % is 200 g/L (label strength): 3500 mL x 200 g/L = 700 g; 700 g / 70 kg = 10 g/kg
        # against the stated 1 g/kg (worked by hand).
        assert "stated 1 g/kg · recomputed 10 g/kg" in shown(screen, "discrepancies")
        refused = {"stated-dose-mismatch", "dose-per-kg"}
        assert set(screen.verification.refusals) == refused
        boxes = {box.id for box in screen.query(Checkbox)}
        assert boxes == {"accept-line-not-stated"}  # the one warning; no box for either refusal
        notes = [str(n.render()) for n in screen.query(".refusal-note").results(Static)]
        assert sorted(notes) == sorted(f"✖ {code}: {NOT_ACCEPTABLE}" for code in refused)
        # Accepting every warning there is leaves a refusal a refusal.
        box = screen.query_one("#accept-line-not-stated", Checkbox)
        assert "X" not in str(box.render())  # ticked or not reads without colour
        await tick(pilot, "line-not-stated")
        assert str(box.render()).startswith("▐X▌ accept line-not-stated")
        await type_into(pilot, "reason-line-not-stated", "central line in place, noted")
        assert screen.verification.record is not None
        assert screen.verification.record.outcome == "refused"
        assert screen.verification.record.decision.accepted[0].code == "line-not-stated"


@sync
async def test_accepted_peripheral_warning_releases_saves_and_matches_osmodose_verify(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]
) -> None:
    log = tmp_path / "app.jsonl"
    monkeypatch.setenv("OSMODOSE_LOG", str(log))
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await open_verification(pilot, VERIFY_PATIENT, PERIPHERAL_SALINE, initials="ab", typed=False)
        screen = verify_screen(app)
        assert screen.verification.outcome == "held"  # type: ignore[union-attr]
        assert screen.verification.acceptable == ["peripheral-osmolarity"]  # type: ignore[union-attr]
        await tick(pilot, "peripheral-osmolarity")
        assert str(screen.query_one("#verify-status", Static).render()).startswith("… INCOMPLETE: accept")
        await type_into(pilot, "reason-peripheral-osmolarity", VEIN_REASON)
        assert str(screen.query_one("#verify-status", Static).render()) == (
            "✔ RELEASED-WITH-ACCEPTED-WARNINGS: each has a reason"
        )
        assert shown(screen, "verify-saved") == NOT_SAVED_YET
        await pilot.press("ctrl+s")
        await pilot.pause()
        saved = shown(screen, "verify-saved")
        await pilot.press("ctrl+s")  # a second press does not log the same verification twice
        await pilot.pause()
    readout = read_log(log)
    assert verify_chain(readout).intact
    [stored] = readout.entries
    assert saved == f"✔ SAVED as record 1 in {log}\nsha256 {stored.sha256}"
    record = stored.entry.record
    assert record.decision.outcome == "released-with-accepted-warnings"
    assert [(a.code, a.reason, a.initials) for a in record.decision.accepted] == [
        ("peripheral-osmolarity", VEIN_REASON, "AB")
    ]
    accept = f"peripheral-osmolarity={VEIN_REASON}"
    cli_log = tmp_path / "cli.jsonl"
    args = [*VERIFY_PATIENT_ARGS, *PERIPHERAL_SALINE_ARGS, "--accept", accept, "--initials", "ab"]
    assert main(["verify", *args, "--log", str(cli_log), "--json"]) == 0
    cli = json.loads(capsys.readouterr().out)["record"]
    app_record = record.to_json()
    for part in ("request", "order", "result", "discrepancies", "decision", "formulary"):
        assert app_record[part] == cli[part], part


@sync
async def test_save_to_a_log_that_cannot_be_written_shows_not_saved(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    blocker = tmp_path / "a file"
    blocker.write_text("not a folder\n", encoding="utf-8")
    log = blocker / "verifications.jsonl"  # its folder is a file: works whoever runs the test
    monkeypatch.setenv("OSMODOSE_LOG", str(log))
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await open_verification(pilot, VERIFY_PATIENT, TEN_FOLD_MANNITOL, initials="AB", typed=False)
        screen = verify_screen(app)
        await pilot.press("ctrl+s")
        await pilot.pause()
        saved = screen.query_one("#verify-saved", Static)
        assert str(saved.render()) == (
            f"✖ NOT SAVED: log {log}: cannot be opened: File exists. "
            "Nothing is verified until the record is in the log."
        )
        assert saved.has_class("-not-saved") and not saved.has_class("-saved")
        assert [n.message for n in app._notifications][-1].startswith("✖ NOT SAVED")
    assert not log.exists()


@sync
async def test_f3_goes_back_and_forth_keeping_the_order_and_reading_the_new_patient() -> None:
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await open_verification(pilot, VERIFY_PATIENT, PERIPHERAL_SALINE, initials="AB", typed=False)
        screen = verify_screen(app)
        assert shown(screen, "patient-typed") == (
            "weight 70 kg, age 45 y, sex male, sodium 141 mmol/L, glucose 6 mmol/L, urea 5 mmol/L"
        )
        await pilot.press("escape")
        assert isinstance(app.screen, MainScreen)
        main_screen(app).field("weight").control.value = ""
        await pilot.press("f3")
        await pilot.pause()
        assert app.screen is screen
        assert screen.field_value("volume") == "250"
        assert str(screen.query_one("#verify-status", Static).render()) == (
            "… INCOMPLETE: weight: is required (on the check screen: escape to go back)"
        )
        assert screen.verification.preview is None  # type: ignore[union-attr]
        await pilot.press("f3")
        assert isinstance(app.screen, MainScreen)
        await fill(pilot, {"weight": "80"})
        await pilot.press("f3")
        await pilot.pause()
        assert screen.verification.record is not None  # type: ignore[union-attr]
        assert screen.verification.record.request.patient.weight_kg == 80  # type: ignore[union-attr]


@sync
async def test_the_verification_keys_are_in_its_footer() -> None:
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await pilot.press("f3")
        await pilot.pause()
        keys = {(k.key, k.description) for k in app.screen.query(FooterKey)}
        assert {("ctrl+s", "save"), ("ctrl+y", "copy sha256"), ("ctrl+p", "print"), ("escape", "back"),
                ("f1", "help")} <= keys  # fmt: skip
        # At 80 columns f3 and f4 stay out of this footer; they still work, and help (f1) lists them.
        assert not {"f3", "f4"} & {key for key, _ in keys}


@sync
async def test_the_saved_records_sha256_is_copied_and_the_record_printed(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    log = tmp_path / "app.jsonl"
    monkeypatch.setenv("OSMODOSE_LOG", str(log))
    printed = tmp_path / "record.txt"
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await open_verification(pilot, VERIFY_PATIENT, TEN_FOLD_MANNITOL, initials="AB")
        await pilot.press("ctrl+y")  # nothing saved yet: nothing to copy
        assert app.clipboard == ""
        await pilot.press("ctrl+s")
        await pilot.pause()
        await pilot.press("ctrl+y")
        [stored] = read_log(log).entries
        assert app.clipboard == stored.sha256
        await pilot.press("ctrl+p")
        await pilot.pause()
        assert isinstance(app.screen, SaveScreen)
        app.screen.query_one("#save-path", Input).value = str(printed)
        await pilot.press("enter")
        await pilot.pause()
    text = printed.read_text(encoding="utf-8")
    assert text.startswith(f"✔ SAVED as record 1 in {log}\nsha256 {stored.sha256}\n")
    assert stored.entry.record.render_text() in text


@sync
async def test_a_key_kept_in_the_logs_folder_shows_not_saved(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    log = tmp_path / "state" / "verifications.jsonl"
    key = tmp_path / "state" / "log-signing.key"
    monkeypatch.setenv("OSMODOSE_LOG", str(log))
    monkeypatch.setenv("OSMODOSE_LOG_KEY", str(key))
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await open_verification(pilot, VERIFY_PATIENT, TEN_FOLD_MANNITOL, initials="AB", typed=False)
        screen = verify_screen(app)
        await pilot.press("ctrl+s")
        await pilot.pause()
        saved = str(screen.query_one("#verify-saved", Static).render())
        assert saved.startswith(f"✖ NOT SAVED: signing key {key}: is inside the log's folder")
    assert not log.exists() and not key.exists()
