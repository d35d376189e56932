"""Labs from an HL7 FHIR R4 file: matched by LOINC, converted by UCUM, newest final wins, typed wins over all.

Check values: the R4 specification's published examples (tests/data/fhir, see its README),
UCUM's definitions ([lb_av] = 453.59237 g, [in_i] = 2.54 cm) and the calendar.
"""

from __future__ import annotations

import contextlib
import io
import json
from datetime import UTC, date, datetime
from pathlib import Path
from typing import Any

import pytest

from osmodose.case.fields import FIELDS, LOINC_FIELDS
from osmodose.cli.main import main
from osmodose.datain import age_years, read_labs_file, with_labs_file
from osmodose.errors import InputError, LabsFileError
from tests.fhir_build import (
    AT,
    DRAWN,
    TYPED_SAME,
    bundle,
    morning_labs,
    observation,
    patient,
    spec_example,
    write,
)

AT_TIME = datetime.fromisoformat(AT)
CHECK_KEYS = (
    "weight",
    "age",
    "sex",
    "height",
    "sodium",
    "potassium",
    "glucose",
    "urea",
    "bun",
    "ethanol",
    "osmolality",
)


def run(*args: str) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        code = main(list(args))
    return code, out.getvalue(), err.getvalue()


def check_json(*args: str) -> dict[str, Any]:
    code, out, err = run("check", *args, "--json")
    assert code in (0, 3, 4), err
    result: dict[str, Any] = json.loads(out)
    return result


# --- the LOINC table -------------------------------------------------------------------------------


def test_every_loinc_code_of_the_issue_is_on_its_field() -> None:
    # The issue's mapping table (domain reference, section 11: seen in public FHIR value sets).
    expected = {
        "2951-2": "sodium",
        "2823-3": "potassium",
        "2345-7": "glucose",
        "14749-6": "glucose",
        "3094-0": "bun",
        "22664-7": "urea",
        "2692-2": "osmolality",
        "29463-7": "weight",
        "8302-2": "height",
    }
    assert {code: LOINC_FIELDS[code][0].key for code in expected} == expected
    assert all(LOINC_FIELDS[code][1].provenance == "value set" for code in expected)
    # Ethanol was recalled, not seen: the table says so.
    assert LOINC_FIELDS["5643-2"][1].provenance == "memory"


def test_no_loinc_code_names_two_fields() -> None:
    codes = [code.code for field in FIELDS.values() for code in field.loinc]
    assert len(codes) == len(set(codes))


# --- the specification's own examples ----------------------------------------------------------------


def test_the_spec_body_weight_example_reads_185_avoirdupois_pounds(tmp_path: Path) -> None:
    # observation-example.json: 185 [lb_av] = 185 x 0.45359237 kg (UCUM [lb_av]; NIST) = 83.91458845 kg.
    path = write(tmp_path / "w.json", spec_example("observation-example.json"))
    (measured,) = read_labs_file(path).measured
    assert (measured.key, measured.loinc, measured.shown) == ("weight", "29463-7", "185 [lb_av]")
    assert measured.value == pytest.approx(83.91458845, rel=1e-12)
    assert measured.date_only and measured.time == datetime(2016, 3, 28, tzinfo=UTC)


def test_the_spec_body_height_example_reads_international_inches(tmp_path: Path) -> None:
    # observation-example-body-height.json: 66.9 [in_i] x 2.54 cm (UCUM [in_i]) = 169.926 cm.
    path = write(tmp_path / "h.json", spec_example("observation-example-body-height.json"))
    (measured,) = read_labs_file(path).measured
    assert measured.key == "height"
    assert measured.value == pytest.approx(66.9 * 2.54, rel=1e-9)


def test_the_spec_whole_blood_glucose_is_listed_and_ignored(tmp_path: Path) -> None:
    # observation-example-f001-glucose.json: LOINC 15074-8 is glucose in blood, not serum or plasma.
    path = write(tmp_path / "g.json", spec_example("observation-example-f001-glucose.json"))
    file = read_labs_file(path)
    assert file.measured == ()
    assert file.ignored == ("Observation/f001 (LOINC 15074-8): not a code osmodose reads; ignored",)


def test_the_spec_patient_gives_age_at_the_sodiums_time_and_sex(tmp_path: Path) -> None:
    # patient-example.json: male, born 1974-12-25. On 2026-12-01 he is 51, 341 days past his birthday
    # in a 365-day year (2025-12-25 to 2026-12-25): 51 + 341/365.
    na = observation("na", "2951-2", 140, "mmol/L", DRAWN, subject="Patient/example")
    path = write(tmp_path / "p.json", bundle(spec_example("patient-example.json"), na))
    fields, data_in = with_labs_file({}, path, AT_TIME, CHECK_KEYS)
    assert fields["sex"] == "male"
    assert fields["age"] == pytest.approx(51 + 341 / 365, rel=1e-12)
    assert data_in.origin("age").shown == "51.93 y (birth date 1974-12-25, on 2026-12-01)"  # type: ignore[union-attr]


def test_resources_about_two_patients_are_refused(tmp_path: Path) -> None:
    # The spec's weight is about Patient/example, its glucose about Patient/f001: never one case.
    document = bundle(spec_example("observation-example.json"), spec_example("observation-example-f001-glucose.json"))
    path = write(tmp_path / "two.json", document)
    with pytest.raises(LabsFileError) as caught:
        read_labs_file(path)
    assert str(caught.value) == (
        f"labs {path}: holds resources about more than one patient (Patient/example, Patient/f001): "
        "one patient per file"
    )


# --- a check from a file equals the check typed by hand ------------------------------------------------


ORDERS = [
    ["--agent", "nacl-3", "--volume", "250", "--duration", "30"],
    ["--agent", "mannitol-20", "--dose", "1g/kg", "--duration", "20min"],
    ["--agent", "nacl-23.4", "--volume", "30", "--line", "central"],
    [],
]


def _without_provenance(result: dict[str, Any]) -> dict[str, Any]:
    return {k: v for k, v in result.items() if k != "labs_file"}


@pytest.mark.parametrize("order", ORDERS, ids=lambda o: " ".join(o[:2]) or "labs only")
def test_a_check_from_a_bundle_equals_the_same_check_typed_by_hand(tmp_path: Path, order: list[str]) -> None:
    path = write(tmp_path / "labs.json", bundle(*morning_labs()))
    from_file = check_json("--labs", str(path), "--at", AT, *order)
    typed = check_json(*TYPED_SAME, *order)
    assert TYPED_SAME[3] == repr(50 + 275 / 365)  # born 1976-03-01; 275 days past the 50th birthday, of 365
    assert _without_provenance(from_file) == _without_provenance(typed)
    assert from_file["labs_file"]["sha256"] and typed["labs_file"] is None


def test_ndjson_and_a_single_observation_read_as_a_bundle(tmp_path: Path) -> None:
    resources = morning_labs()
    ndjson = write(tmp_path / "labs.ndjson", resources)
    from_bundle = with_labs_file({}, write(tmp_path / "b.json", bundle(*resources)), AT_TIME, CHECK_KEYS)[0]
    assert with_labs_file({}, ndjson, AT_TIME, CHECK_KEYS)[0] == from_bundle
    single = write(tmp_path / "na.json", resources[3])
    fields, _ = with_labs_file({}, single, AT_TIME, ("sodium",))
    assert str(fields["sodium"]) == "130.0 milliequivalent / liter"


def test_the_newest_final_value_wins_and_typed_values_win_over_it(tmp_path: Path) -> None:
    path = write(tmp_path / "labs.json", bundle(*morning_labs()))
    fields, data_in = with_labs_file({"sodium": "131", "weight": ""}, path, AT_TIME, CHECK_KEYS)
    assert fields["sodium"] == "131"
    sodium = data_in.origin("sodium")
    assert sodium is not None and sodium.source == "typed"
    assert sodium.replaced == "130 meq/L (Observation/na-2, 2026-12-01 08:30 +01:00)"
    weight = data_in.origin("weight")
    assert weight is not None and (weight.source, weight.resource) == ("file", "Observation/wt-1")
    glucose = data_in.origin("glucose")
    assert glucose is not None and glucose.age_h == pytest.approx(1.5)


# --- the cases the issue names, word for word ----------------------------------------------------------


def test_a_sodium_in_the_wrong_dimension_stops_the_check(tmp_path: Path) -> None:
    resources = [patient(), observation("na-9", "2951-2", 140, "mg", DRAWN)]
    path = write(tmp_path / "labs.json", bundle(*resources))
    code, _, err = run("check", "--labs", str(path), "--at", AT, "--weight", "60")
    assert code == 2
    assert err == (
        f"osmodose: labs {path}: Observation/na-9 (LOINC 2951-2, sodium): 140 mg is in the wrong unit "
        "(accepted: mmol/L)\n"
    )


def test_a_unit_that_is_not_ucum_stops_the_check(tmp_path: Path) -> None:
    # mEq/L is how people write it; UCUM's code is meq/L (case-sensitive).
    resources = [patient(), observation("na-8", "2951-2", 140, "mEq/L", DRAWN)]
    path = write(tmp_path / "labs.json", bundle(*resources))
    code, _, err = run("check", "--labs", str(path), "--at", AT, "--weight", "60")
    assert code == 2
    assert err == (
        f"osmodose: labs {path}: Observation/na-8 (LOINC 2951-2, sodium): unit 'mEq/L' is not a UCUM unit code "
        "(accepted: mmol/L)\n"
    )


def test_an_unknown_code_is_listed_and_ignored(tmp_path: Path) -> None:
    resources = [*morning_labs(), observation("chl-1", "2075-0", 101, "mmol/L", DRAWN)]
    path = write(tmp_path / "labs.json", bundle(*resources))
    result = check_json("--labs", str(path), "--at", AT)
    assert "Observation/chl-1 (LOINC 2075-0): not a code osmodose reads; ignored" in result["labs_file"]["ignored"]


def test_a_preliminary_sodium_is_listed_and_the_newest_final_one_used(tmp_path: Path) -> None:
    late = observation("na-3", "2951-2", 133, "mmol/L", "2026-12-01T09:30:00+01:00", status="preliminary")
    path = write(tmp_path / "labs.json", bundle(*morning_labs(), late))
    result = check_json("--labs", str(path), "--at", AT)
    assert result["labs"]["sodium_mmol_l"] == 130.0
    assert result["labs_file"]["ignored"] == [
        "Observation/na-3 (LOINC 2951-2, sodium): status preliminary, not final; ignored"
    ]


def test_a_file_with_only_a_preliminary_sodium_stops_the_check(tmp_path: Path) -> None:
    resources = [patient(), observation("na-3", "2951-2", 133, "mmol/L", DRAWN, status="preliminary")]
    path = write(tmp_path / "labs.json", bundle(*resources))
    code, _, err = run("check", "--labs", str(path), "--at", AT, "--weight", "60")
    assert code == 2
    assert err == (
        f"osmodose: labs {path}: Observation/na-3 (LOINC 2951-2, sodium): status preliminary, not final: "
        "the file has no final sodium\n"
    )


def test_a_stale_sodium_is_a_warning(tmp_path: Path) -> None:
    # The sodium was drawn at 08:30; at 16:00 it is 7.5 h old, past the demo formulary's lab_max_age of 6 h
    # (common practice: re-measure every 2-6 h).
    path = write(tmp_path / "labs.json", bundle(*morning_labs()))
    result = check_json("--labs", str(path), "--at", "2026-12-01T16:00+01:00")
    assert result["status"] == "warn"
    assert result["findings"] == [
        {
            "code": "sodium-too-old",
            "severity": "warn",
            "message": (
                "the sodium was drawn 7.5 h before this check, more than the 6 h limit: re-measure before dosing"
            ),
            "value": 7.5,
            "limit": 6.0,
            "unit": "h",
        }
    ]


def test_a_sodium_at_the_age_limit_is_not_stale(tmp_path: Path) -> None:
    path = write(tmp_path / "labs.json", bundle(*morning_labs()))
    result = check_json("--labs", str(path), "--at", "2026-12-01T14:30+01:00")
    assert result["status"] == "ok" and result["labs_file"]["fields"][3]["age_h"] == 6.0


def test_a_typed_sodium_has_no_age_and_is_never_stale(tmp_path: Path) -> None:
    path = write(tmp_path / "labs.json", bundle(*morning_labs()))
    result = check_json("--labs", str(path), "--at", "2026-12-02T16:00+01:00", "--sodium", "130")
    assert result["status"] == "ok"


def test_an_administrative_gender_must_be_confirmed(tmp_path: Path) -> None:
    resources = [patient(gender="other"), observation("na", "2951-2", 140, "mmol/L", DRAWN)]
    path = write(tmp_path / "labs.json", bundle(*resources))
    code, _, err = run("check", "--labs", str(path), "--at", AT, "--weight", "60")
    assert code == 2
    assert err == (
        "osmodose: sex: is not known: Patient/p1 has the administrative gender other; confirm the sex for the "
        "total-body-water formulas (accepted: female or male)\n"
    )
    assert run("check", "--labs", str(path), "--at", AT, "--weight", "60", "--sex", "male")[0] == 0


def test_a_lab_drawn_after_the_check_is_refused(tmp_path: Path) -> None:
    path = write(tmp_path / "labs.json", bundle(*morning_labs()))
    with pytest.raises(LabsFileError) as caught:
        with_labs_file({}, path, datetime.fromisoformat("2026-12-01T08:00+01:00"), CHECK_KEYS)
    assert str(caught.value) == (
        f"labs {path}: Observation/na-2 (LOINC 2951-2, sodium): was drawn at 2026-12-01 08:30 +01:00, after the "
        "time of the check (2026-12-01 08:00 +01:00)"
    )


def test_two_different_values_at_the_same_time_are_not_guessed_between(tmp_path: Path) -> None:
    twin = observation("na-2b", "2951-2", 135, "mmol/L", DRAWN)
    path = write(tmp_path / "labs.json", bundle(*morning_labs(), twin))
    with pytest.raises(LabsFileError) as caught:
        with_labs_file({}, path, AT_TIME, CHECK_KEYS)
    assert str(caught.value) == (
        f"labs {path}: Observation/na-2 (LOINC 2951-2, sodium): gives 130 meq/L and Observation/na-2b gives "
        "135 mmol/L at the same time: which one is meant cannot be told"
    )


@pytest.mark.parametrize(
    ("value", "extra", "problem"),
    [
        (None, {}, "has no value"),
        (None, {"dataAbsentReason": {"text": "haemolysed"}}, "has no value (haemolysed)"),
        (None, {"valueString": "see comment"}, "has a value that is not a quantity"),
        (140, {"valueQuantity": {"value": 140, "comparator": ">", "system": "http://unitsofmeasure.org",
                                 "code": "mmol/L"}}, "is a bound (>140), not a value"),
        (1400, {}, "1400 mmol/L is outside the plausible range"),
    ],
)  # fmt: skip
def test_an_unusable_newest_sodium_names_its_resource_code_and_field(
    tmp_path: Path, value: float | None, extra: dict[str, Any], problem: str
) -> None:
    broken = observation("na-5", "2951-2", value, "mmol/L", "2026-12-01T09:00:00+01:00", **extra)
    path = write(tmp_path / "labs.json", bundle(*morning_labs(), broken))
    with pytest.raises(LabsFileError) as caught:
        with_labs_file({}, path, AT_TIME, CHECK_KEYS)
    assert str(caught.value).startswith(f"labs {path}: Observation/na-5 (LOINC 2951-2, sodium): {problem}")
    # Typed over, the broken value is listed, not fatal.
    _, data_in = with_labs_file({"sodium": "131"}, path, AT_TIME, CHECK_KEYS)
    assert any(line.startswith("Observation/na-5 (LOINC 2951-2, sodium): ") for line in data_in.ignored)


@pytest.mark.parametrize(
    ("text", "problem"),
    [
        ("", "is empty"),
        ("{", "is not valid JSON at line 1, column 2 (Expecting property name enclosed in double quotes)"),
        ('{"a": NaN}', "is not plain JSON data (NaN is not a JSON number)"),
        ("[1, 2]", "the file is not a FHIR resource (no resourceType)"),
        ('{"resourceType": "Observation", "status": "final"}', ""),
        ('{"resourceType": "Bundle", "entry": [{"fullUrl": "x"}]}', "entry 1 holds no FHIR resource"),
    ],
)
def test_a_file_that_is_not_fhir_is_refused_with_one_line(tmp_path: Path, text: str, problem: str) -> None:
    path = tmp_path / "bad.json"
    path.write_text(text, encoding="utf-8")
    with pytest.raises(LabsFileError) as caught:
        read_labs_file(path)
    if problem:
        assert str(caught.value) == f"labs {path}: {problem}"
    else:
        assert str(caught.value) == (
            f"labs {path}: Observation at the file: is not a valid FHIR R4 Observation: code: Field required"
        )


def test_other_resources_are_listed_and_ignored(tmp_path: Path) -> None:
    encounter = {"resourceType": "Encounter", "id": "e1", "status": "in-progress", "class": {"code": "IMP"}}
    path = write(tmp_path / "labs.json", bundle(*morning_labs(), encounter))
    assert read_labs_file(path).ignored == ("Encounter/e1: resource type Encounter is not read; ignored",)


def test_a_missing_file_is_one_line(tmp_path: Path) -> None:
    code, _, err = run("check", "--labs", str(tmp_path / "none.json"), "--weight", "60")
    assert code == 2
    assert err == f"osmodose: labs {tmp_path / 'none.json'}: cannot be read: No such file or directory\n"


def test_without_labs_the_required_options_are_still_required(capsys: pytest.CaptureFixture[str]) -> None:
    with pytest.raises(SystemExit) as stopped:
        main(["check", "--weight", "70", "--sex", "male", "--sodium", "140"])
    assert stopped.value.code == 2
    assert capsys.readouterr().err == (
        "osmodose check: the following arguments are required: --age (see osmodose check --help)\n"
    )


def test_the_report_says_where_each_value_came_from(tmp_path: Path) -> None:
    path = write(tmp_path / "labs.json", bundle(*morning_labs()))
    code, out, _ = run("check", "--labs", str(path), "--at", AT, "--glucose", "7")
    assert code == 0
    assert "  sodium: 130 meq/L from Observation/na-2 (LOINC 2951-2), 2026-12-01 08:30 +01:00, 1.5 h old\n" in out
    assert "  glucose: typed 7, replaces the file's 126 mg/dL (Observation/glu-1, 2026-12-01 08:30 +01:00)\n" in out
    assert "  age: 50.75 y (birth date 1976-03-01, on 2026-12-01) from Patient/p1\n" in out


def test_verify_reads_the_same_file(tmp_path: Path) -> None:
    path = write(tmp_path / "labs.json", bundle(*morning_labs()))
    log = tmp_path / "log.jsonl"
    args = ["verify", "--labs", str(path), "--at", AT, "--agent", "nacl-3", "--volume", "250", "--duration", "30"]
    args += ["--line", "central"]
    code, out, err = run(*args, "--initials", "AB", "--log", str(log), "--json")
    assert code == 0, err
    record = json.loads(out)["record"]
    assert record["result"]["labs"]["sodium_mmol_l"] == 130.0
    assert record["result"]["labs_file"]["fields"][3]["resource"] == "Observation/na-2"


# --- age by the calendar -----------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("born", "on", "years"),
    [
        (date(1974, 12, 25), date(2026, 12, 25), 52.0),  # the birthday itself
        (date(1974, 12, 25), date(2026, 12, 24), 51 + 364 / 365),  # the day before
        (date(1961, 6, 1), date(2026, 6, 1), 65.0),  # the elderly cut-off is reached on the day
        (date(2000, 2, 29), date(2025, 2, 28), 25.0),  # born 29 February: the 28th in a common year
    ],
)
def test_age_is_whole_years_by_the_calendar_then_the_share_of_the_year(born: date, on: date, years: float) -> None:
    assert age_years(born, on) == pytest.approx(years, abs=1e-12)


def test_a_birth_date_without_a_day_asks_for_the_age(tmp_path: Path) -> None:
    path = write(
        tmp_path / "labs.json", bundle(patient(birth="1976"), observation("na", "2951-2", 140, "mmol/L", DRAWN))
    )
    with pytest.raises(LabsFileError) as caught:
        with_labs_file({}, path, AT_TIME, CHECK_KEYS)
    assert str(caught.value) == f"labs {path}: Patient/p1: birthDate 1976 is not a whole date: type the age"
    fields, _ = with_labs_file({"age": "50"}, path, AT_TIME, CHECK_KEYS)
    assert fields["age"] == "50"


def test_input_errors_and_file_errors_are_what_the_command_line_catches() -> None:
    assert issubclass(LabsFileError, Exception) and issubclass(InputError, Exception)
