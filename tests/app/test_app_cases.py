"""Whole cases typed into the real app at 80x24 end with the same figures as `osmodose check --json`."""

from __future__ import annotations

import json

import pytest

from osmodose.app.shown import plain
from osmodose.app.view import NOT_VALID
from osmodose.app.widgets.status_banner import StatusBanner
from osmodose.cli.main import main
from tests.app.driving import (
    MANNITOL,
    MANNITOL_ARGS,
    REFUSE,
    SALINE,
    SALINE_ARGS,
    fill,
    main_screen,
    make_app,
    sync,
    type_in_form_order,
)
from tests.conftest import run_cli

SIZE = (80, 24)


def shown(screen: object, figure_id: str) -> str:
    return screen.shown.values.get(figure_id, NOT_VALID)  # type: ignore[attr-defined, no-any-return]


@sync
async def test_mannitol_case_shows_the_figures_of_check_json(capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["check", *MANNITOL_ARGS, "--json"]) == 0
    expected = json.loads(capsys.readouterr().out)
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await type_in_form_order(pilot, MANNITOL)
        screen = main_screen(app)
        assert screen.outcome.result is not None
        assert screen.outcome.result.to_json() == expected
        dose = expected["dose"]
        # Mannitol 20 % w/v is 200 g/L (label strength): 70 kg x 1 g/kg = 70 g; 70 / 200 = 0.350 L;
        # 350 mL over 20 min = 350 x 3 = 1050 mL/h (worked by hand).
        assert dose["volume_ml"] == pytest.approx(350.0)
        assert shown(screen, "volume") == f"{dose['volume_ml']:.1f} mL ({dose['volume_ml_per_kg']:.2f} mL/kg)"
        assert shown(screen, "volume") == "350.0 mL (5.00 mL/kg)"
        assert shown(screen, "rate") == "1050.0 mL/h over 20 min"
        assert shown(screen, "solute") == f"{dose['solute_g']:.2f} g ({dose['solute_g_per_kg']:.2f} g/kg)"
        assert shown(screen, "osmoles") == f"{dose['osmoles_mosm']:.0f} mOsm"
        assert shown(screen, "projected-na") == "n/a (n/a)"  # no sodium projection for mannitol
        # 2 x 141 + 6 + 5 = 293 mOsm/kg; gap 300 - 293 = 7 (worked by hand).
        assert (
            shown(screen, "calc-osm") == f"{expected['calculated_osmolality_mosm_kg']:.1f} mOsm/kg" == "293.0 mOsm/kg"
        )
        assert shown(screen, "gap") == f"{expected['osmolar_gap_mosm_kg']:.1f} mOsm/kg" == "7.0 mOsm/kg"
        assert shown(screen, "tbw") == f"{expected['patient']['total_body_water_l']:.1f} L (fraction)"
        dose = plain(screen.shown.dose)
        # Alternatives, the least waste first (then the fewest containers): never read as 1,000 mL hung.
        start = dose.index("from stock, any one of:")
        assert dose[start : start + 3] == [
            "from stock, any one of:",
            "  1 × 500 mL (discard 150 mL)",
            "  or 2 × 250 mL (discard 150 mL)",
        ]
        assert screen.query_one(StatusBanner).text == "✔ OK: no limit crossed"
        assert plain(screen.shown.checks) == ["✔ OK: no limit crossed"]


@sync
async def test_hypertonic_saline_case_shows_the_figures_of_check_json_run_as_a_command() -> None:
    done = run_cli("check", *SALINE_ARGS, "--json")
    assert done.returncode == 3, done.stderr
    expected = json.loads(done.stdout)
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await fill(pilot, SALINE)
        screen = main_screen(app)
        assert screen.outcome.result is not None
        assert screen.outcome.result.to_json() == expected
        dose = expected["dose"]
        # 154 lb = 69.85 kg, TBW 0.6 x 69.85 = 41.9 L; 3 % NaCl carries 513 mmol/L Na (label).
        # Target +6: V = 6 x 41.9 / (513 - 128 - 6) = 0.663 L (mass balance, Chen S et al. Kidney360 2021).
        assert dose["volume_ml"] == round(6 * 0.6 * 154 * 0.45359237 / (513 - 128 - 6) * 1000, 1)
        assert shown(screen, "volume") == f"{dose['volume_ml']:.1f} mL ({dose['volume_ml_per_kg']:.2f} mL/kg)"
        assert shown(screen, "rate") == f"{dose['rate_ml_h']:.1f} mL/h over 120 min"
        assert (
            shown(screen, "sodium-load") == f"{dose['sodium_mmol']:.1f} mmol ({dose['sodium_mmol_per_kg']:.2f} mmol/kg)"
        )
        assert shown(screen, "na-per-litre") == f"{expected['sodium_change_per_litre_mmol_l']:+.1f} mmol/L"
        low, high = (x - 128 for x in expected["projected_sodium_range_mmol_l"])
        assert shown(screen, "projected-na") == (
            f"{expected['projected_sodium_mmol_l']:.1f} mmol/L "
            f"({expected['projected_sodium_rise_mmol_l']:+.1f} mmol/L; range {low:+.1f} to {high:+.1f})"
        )
        # The range's high end: 2.4 x the predicted +6 in hyponatraemia (Mohmand HK et al. CJASN 2007).
        assert shown(screen, "projected-na") == "134.0 mmol/L (+6.0 mmol/L; range +3.5 to +14.4)"
        # glucose 108 mg/dL / 180.16 g/mol = 5.99 mmol/L; BUN 14 mg/dL / 28.01 = 5.0 mmol/L urea.
        assert shown(screen, "calc-osm") == f"{expected['calculated_osmolality_mosm_kg']:.1f} mOsm/kg"
        codes = [line.split(" ")[2].rstrip(":") for line in plain(screen.shown.checks)]
        assert codes == [f["code"] for f in expected["findings"]]
        assert screen.query_one(StatusBanner).text.startswith("▲ WARN: ")
        assert screen.query_one("#dose").border_title == "dose ▲ WARN"


@sync
async def test_refused_order_shows_refuse_word_symbol_and_colour() -> None:
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await fill(pilot, REFUSE)
        screen = main_screen(app)
        banner = screen.query_one(StatusBanner)
        # Measured osmolality 325 is above the formulary's 320 mOsm/kg refuse limit (hold mannitol
        # above 320: Hinson HE et al. J Intensive Care Med 2013).
        assert banner.text == "✖ REFUSE: a hard limit is crossed; do not give as ordered"
        assert banner.has_class("-refuse") and not banner.has_class("-ok")
        assert screen.query_one("#results").has_class("-refuse")
        assert screen.query_one("#dose").border_title == "dose ✖ REFUSED"
        assert plain(screen.shown.checks)[0].startswith("✖ REFUSE osmolality-high: ")


@sync
async def test_implausible_sodium_is_marked_at_its_field_and_no_figure_stays() -> None:
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await fill(pilot, MANNITOL)
        screen = main_screen(app)
        assert shown(screen, "volume") == "350.0 mL (5.00 mL/kg)"
        await fill(pilot, {"sodium": "1400"})
        sodium = screen.field("sodium")
        assert sodium.has_class("-bad")
        assert sodium.marked == "✖ sodium: 1400 is outside the plausible range (accepted: 90 to 200 mmol/L)"
        assert screen.outcome.result is None
        assert screen.shown.values == {}
        shown_text = "".join(plain(screen.shown.figures) + plain(screen.shown.dose) + plain(screen.shown.summary[1:]))
        assert not any(ch.isdigit() for ch in shown_text.replace("1400", ""))  # no number from an earlier entry
        assert screen.query_one(StatusBanner).text.startswith("? NOT VALID: sodium: 1400 is outside")
        assert screen.query_one("#dose").border_title == "dose"
        assert [f.spec.key for f in screen.fields.values() if f.has_class("-bad")] == ["sodium"]


@sync
async def test_unreadable_unit_is_marked_at_the_amount_field() -> None:
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await fill(pilot, {**MANNITOL, "amount": "1 g/kk"})
        screen = main_screen(app)
        amount = screen.field("amount")
        assert amount.has_class("-bad")
        assert amount.marked.startswith("✖ dose: 1 g/kk ")
        assert screen.query_one(StatusBanner).has_class("-invalid")


@sync
async def test_unreachable_target_rise_is_marked_at_the_amount_field() -> None:
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        # Glucose 5 % has no sodium, so no volume of it raises sodium (the infusate is below serum).
        await fill(pilot, {**SALINE, "agent": "glucose-5"})
        amount = main_screen(app).field("amount")
        assert amount.has_class("-bad")
        # Named as on screen ("target Na change"), never by the command line's "target-rise".
        assert amount.marked.startswith("✖ target Na change: 6 cannot be reached with glucose-5: ")


@sync
async def test_empty_form_asks_for_the_first_required_field_without_marking_it_wrong() -> None:
    app = make_app()
    async with app.run_test(size=SIZE):
        screen = main_screen(app)
        weight = screen.field("weight")
        assert weight.has_class("-missing") and not weight.has_class("-bad")
        assert weight.marked == "… needed: weight: is required"
        assert screen.query_one(StatusBanner).text == "… INCOMPLETE: weight: is required  (no results shown)"


@sync
async def test_amount_without_agent_asks_for_the_agent() -> None:
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        order = {k: v for k, v in MANNITOL.items() if k != "agent"}
        await fill(pilot, order)
        screen = main_screen(app)
        assert screen.outcome.field == "agent" and screen.outcome.missing
        assert screen.field("agent").has_class("-missing")


@sync
async def test_labs_without_order_say_no_order() -> None:
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await fill(pilot, {k: v for k, v in MANNITOL.items() if k not in ("agent", "amount", "duration")})
        screen = main_screen(app)
        assert screen.query_one(StatusBanner).text == "✔ OK: no limit crossed  (no order: labs only)"
        assert plain(screen.shown.dose) == ["no order entered: the labs are checked alone"]
        assert shown(screen, "calc-osm") == "293.0 mOsm/kg"
