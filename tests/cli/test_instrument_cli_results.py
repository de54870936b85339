"""Results, ratio mode, strontium screening, changes of scale, plots and output schemas.

Expected values are recomputed here from the demo's invented text files
(demo_db/instrument/*.csv) with independent code: bracketing by hand, numpy.interp for
the curve, and the exact change of scale of Coplen 2011. Nothing is copied from a run of
tracker.
"""

from __future__ import annotations

import csv
import io
import math
import statistics
import tomllib
from pathlib import Path
from typing import Any

import numpy as np
import pytest
from jsonschema import ValidationError
from PIL import Image

from tests.cli.budget_book import validate
from tests.cli.conftest import counts, invoke, ok_json
from tests.cli.test_instrument_cli import (
    CA_BATCH,
    TECH,
    bench_export,
    demo_cuts,
    import_file,
    profile_text,
    refused,
    save_profile,
)

ROOT = Path(__file__).resolve().parents[2]
INSTRUMENT = ROOT / "demo_db" / "instrument"
MDGC, KF = "MDGC/LN/0457", "KF-2026-014"  # loans of demo_db/scenario.toml
MANAGER = "ines"
SRM_987 = 0.710248  # 87Sr/86Sr of SRM 987 (check-values.md, memory: McArthur et al. 2001)
STRATA_MA = (383.0, 387.0)  # scenario.toml: age_min_ma / age_max_ma of B-7781 and B-7782
PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"  # PNG specification (ISO/IEC 15948), first 8 bytes


def kept_rows(path: Path) -> list[list[str]]:
    """Rows of a demo CSV, without '#' comment lines and blank lines, header first."""
    rows = csv.reader(io.StringIO(path.read_text(encoding="utf-8")))
    return [r for r in rows if r and not r[0].startswith("#")]


def sr_by_hand() -> dict[str, list[float]]:
    """Each cut's normalised 87Sr/86Sr runs from the demo export: R / mean(bracketing
    standards) × accepted standard ratio (standard–sample bracketing, practice)."""
    _header, *rows = kept_rows(INSTRUMENT / "sr-session-2026-11-26.csv")
    runs = sorted((int(r[0]), r[1], float(r[2])) for r in rows)
    standards = [(run, value) for run, name, value in runs if name == "SRM 987"]
    found: dict[str, list[float]] = {}
    for run, name, value in runs:
        if name == "SRM 987":
            continue
        before = [v for r, v in standards if r < run][-1]
        after = next(v for r, v in standards if r > run)
        found.setdefault(name, []).append(value / ((before + after) / 2) * SRM_987)
    return found


def scan_intervals(ratio: float, u: float) -> list[tuple[float, float]]:
    """Ages where |curve − R| ≤ 2·√(u² + u_curve²), by a 0.001 Ma scan with numpy.interp."""
    header, *rows = kept_rows(INSTRUMENT / "sr-curve-INVENTED.csv")
    assert header == ["age_ma", "87sr/86sr", "u"]
    ages, values, us = (np.array([float(r[i]) for r in rows]) for i in range(3))
    grid = np.arange(round(ages[0] * 1000), round(ages[-1] * 1000) + 1) / 1000
    inside = np.abs(np.interp(grid, ages, values) - ratio) <= 2 * np.hypot(
        u, np.interp(grid, ages, us)
    )
    found, start = [], None
    for age, ok in zip(grid, inside, strict=True):
        if ok and start is None:
            start = float(age)
        if not ok and start is not None:
            found.append((start, float(age) - 0.001))
            start = None
    if start is not None:
        found.append((start, float(grid[-1])))
    return found


# ---------------------------------------------------------------- 4. ratio mode, screening


def test_strontium_results_are_normalised_ratios_as_computed_by_hand(demo_db: Path) -> None:
    rows = ok_json(invoke("results", "--loan", MDGC, db=demo_db, as_json=True))
    validate(rows, "results.schema.json")
    sr = [r for r in rows if r["ratio"] == "87/86"]
    hand = sr_by_hand()
    assert sorted(r["cut"] for r in sr) == sorted(hand) and len(sr) == 2
    for r in sr:
        values = hand[r["cut"]]
        assert (r["kind"], r["scale"], r["loan"]) == ("ratio", "SRM 987", MDGC)
        assert r["n"] == len(values) == 3
        assert r["value"] == pytest.approx(statistics.fmean(values), rel=1e-12)
        assert r["two_sd"] == pytest.approx(2 * statistics.stdev(values), rel=1e-9)  # n − 1


def test_screening_flags_one_specimen_and_its_intervals_match_a_dense_scan(
    demo_db: Path,
) -> None:
    lines = ok_json(invoke("screen", MDGC, db=demo_db, as_json=True))
    validate(lines, "screening.schema.json")
    verdicts = sorted(line["verdict"] for line in lines)
    assert verdicts == ["consistent with its stratigraphic age", "possibly reworked or altered"]
    results = ok_json(invoke("results", "--loan", MDGC, db=demo_db, as_json=True))
    cut_of = {r["specimen"]: r["cut"] for r in results if r["ratio"] == "87/86"}
    hand = sr_by_hand()
    for line in lines:
        values = hand[cut_of[line["specimen"]]]
        mean = statistics.fmean(values)
        u = statistics.stdev(values) / math.sqrt(len(values))  # standard error of the mean
        expected = scan_intervals(mean, u)
        assert line["ratio"] == pytest.approx(mean, rel=1e-12)
        assert len(line["intervals_ma"]) == len(expected) >= 1
        for (start, end), (hand_start, hand_end) in zip(
            line["intervals_ma"], expected, strict=True
        ):
            assert start == pytest.approx(hand_start, abs=0.01)
            assert end == pytest.approx(hand_end, abs=0.01)
        young, old = STRATA_MA
        fits = any(a <= old and b >= young for a, b in expected)  # interval overlap, by hand
        assert line["consistent"] is fits
        assert (line["age_min_ma"], line["age_max_ma"]) == STRATA_MA


def curve_band_by_hand(youngest: float, oldest: float) -> tuple[float, float]:
    """The demo curve's ratio ± 2u over an age range, by a 0.001 Ma scan with numpy.interp."""
    _header, *rows = kept_rows(INSTRUMENT / "sr-curve-INVENTED.csv")
    ages, values, us = (np.array([float(r[i]) for r in rows]) for i in range(3))
    grid = np.linspace(youngest, oldest, round((oldest - youngest) * 1000) + 1)
    middle, spread = np.interp(grid, ages, values), 2 * np.interp(grid, ages, us)
    return float(np.min(middle - spread)), float(np.max(middle + spread))


def test_screening_gives_the_ratio_the_curve_expects_at_the_stated_age(demo_db: Path) -> None:
    lines = ok_json(invoke("screen", MDGC, db=demo_db, as_json=True))
    low, high = curve_band_by_hand(*STRATA_MA)
    assert lines and all(
        (line["expected_low"], line["expected_high"]) == pytest.approx((low, high), abs=1e-9)
        for line in lines
    )


def test_human_screening_shows_measured_expected_and_the_verdicts(demo_db: Path) -> None:
    result = invoke("screen", MDGC, db=demo_db)
    assert result.exit_code == 0, result.stderr
    assert "possibly reworked" in result.stdout and "consistent with" in result.stdout
    low, high = curve_band_by_hand(*STRATA_MA)
    assert f"{low:.6f}–{high:.6f}" in result.stdout  # a ratio at six decimals, by hand
    for line in ok_json(invoke("screen", MDGC, db=demo_db, as_json=True)):
        assert f"{line['ratio']:.6f} ± " in result.stdout  # measured, with its 2SD


CURVE_HEAD = "age_ma,87sr/86sr,u\n"
BAD_CURVES = [  # (id, file, field the refusal names, words of its reason)
    (
        "unsorted",
        "370,0.70820,0.00003\n380,0.70790,0.00003\n375,0.70805,0.00003\n",
        "row 4, column age_ma",
        "sort the curve",
    ),
    (
        "empty cell",
        "370,0.70820,0.00003\n380,0.70790,\n390,0.70795,0.00003\n",
        "row 3, column u",
        "empty",
    ),
    (
        "text",
        "370,0.70820,0.00003\n380,about 0.7079,0.00003\n390,0.70795,0.00003\n",
        "row 3, column 87sr/86sr",
        "'about 0.7079' is not a number",
    ),
]


@pytest.mark.parametrize(
    ("body", "field_name", "reason"),
    [case[1:] for case in BAD_CURVES],
    ids=[case[0] for case in BAD_CURVES],
)
def test_a_bad_curve_file_is_refused_naming_row_and_column(
    demo: Path, tmp_path: Path, body: str, field_name: str, reason: str
) -> None:
    path = tmp_path / "curve.csv"
    path.write_text(CURVE_HEAD + body, encoding="utf-8")
    before = counts(demo)
    result = invoke("curve", "add", "bad-curve", str(path), db=demo, actor=MANAGER)
    assert reason in refused(result, 2, field_name)
    assert counts(demo) == before


def test_curve_row_numbers_count_comment_lines_like_the_file(demo: Path, tmp_path: Path) -> None:
    path = tmp_path / "curve.csv"
    preamble = "# invented curve, test only\n# columns: age, ratio, u\n"
    path.write_text(preamble + CURVE_HEAD + BAD_CURVES[0][1], encoding="utf-8")
    before = counts(demo)
    result = invoke("curve", "add", "bad-curve", str(path), db=demo, actor=MANAGER)
    refused(result, 2, "row 6, column age_ma")  # the unsorted 375 Ma is line 6 of the file
    assert counts(demo) == before


# ---------------------------------------------------------------- ratio mode refusals


def test_ratio_mode_without_standard_values_is_refused(demo: Path) -> None:
    before = counts(demo)
    path = INSTRUMENT / "sr-session-2026-11-26.csv"
    result = import_file(
        demo, path, "mc-sr", "--mode", "ratio", element="Sr", standard="SRM 987", as_json=False
    )
    assert result.exit_code == 2 and len(result.stderr.splitlines()) == 1, result.stderr
    assert counts(demo) == before


def test_ratio_mode_standard_values_must_cover_every_ratio(demo: Path) -> None:
    before = counts(demo)
    path = INSTRUMENT / "sr-session-2026-11-26.csv"
    extra = ("--mode", "ratio", "--standard-value", "88/86=8.375209")  # not the profile's 87/86
    result = import_file(demo, path, "mc-sr", *extra, element="Sr", standard="SRM 987")
    assert result.exit_code == 2, result.stdout
    assert counts(demo) == before


# ---------------------------------------------------------------- 5. change of scale


def on_new_scale(delta: float, anchor: float) -> float:
    """δ(X/new) from δ(X/old) and δ(new/old), ‰: exact ratio composition (Coplen 2011)."""
    return ((1 + delta / 1000) / (1 + anchor / 1000) - 1) * 1000


def test_the_scale_formula_gives_the_check_values_worked_numbers() -> None:
    assert on_new_scale(1.00, 1.88) == pytest.approx(-0.87835, abs=5e-6)  # check-values.md
    assert on_new_scale(0.0, 1.88) == pytest.approx(-1.87647, abs=5e-6)  # check-values.md
    assert on_new_scale(1.88, 1.88) == 0.0  # seawater on its own scale: 0 by definition


def test_results_convert_exactly_to_a_new_reference_scale(demo: Path) -> None:
    anchors = {"44/40": 1.88, "44/42": 0.92}  # invented SW-test values on SRM 915a
    add = ("reference", "add", "SW-test", "--element", "Ca")
    ok_json(invoke(*add, db=demo, actor=MANAGER, as_json=True))
    for ratio, value in anchors.items():
        ok_json(
            invoke(
                "reference",
                "value",
                "SW-test",
                "--ratio",
                ratio,
                "--scale",
                "SRM 915a",
                "--value",
                str(value),
                "--two-sd",
                "0.1",
                "--source",
                "invented for a test",
                db=demo,
                actor=MANAGER,
                as_json=True,
            )
        )
    plain = ok_json(invoke("results", db=demo, as_json=True))
    moved = ok_json(invoke("results", "--scale", "SW-test", db=demo, as_json=True))
    validate(moved, "results.schema.json")
    assert len(moved) == len(plain) > 0
    kinds = set()
    for old, new in zip(plain, moved, strict=True):
        same = ("cut", "session", "ratio", "n")
        assert [new[k] for k in same] == [old[k] for k in same]
        kinds.add(old["kind"])
        if old["kind"] == "delta":
            assert old["scale"] == "SRM 915a" and new["scale"] == "SW-test"
            expected = on_new_scale(old["value"], anchors[old["ratio"]])
            assert new["value"] == pytest.approx(expected, abs=1e-9)
            # the exact map shrinks a spread by 1/(1 + a/1000) (≈ 0.2 % here); tracker keeps
            # the 2SD as measured — both are accepted, to the 0.2 % that separates them
            exact_two_sd = old["two_sd"] / (1 + anchors[old["ratio"]] / 1000)
            assert new["two_sd"] == pytest.approx(exact_two_sd, rel=2.5e-3)
        else:  # a normalised ratio is not a δ: it stays as it is
            assert (new["value"], new["scale"]) == (old["value"], old["scale"])
    assert kinds == {"delta", "ratio"}


def test_the_results_list_gives_every_delta_and_its_2sd_in_per_mil(demo_db: Path) -> None:
    rows = ok_json(invoke("results", "--loan", KF, db=demo_db, as_json=True))
    deltas = [r for r in rows if r["kind"] == "delta" and r["two_sd"]]
    printed = invoke("results", "--loan", KF, db=demo_db).stdout
    assert deltas and printed.count("‰") == 2 * len(deltas)  # the value's and the 2SD's


def test_a_scale_without_an_accepted_value_is_refused(demo_db: Path) -> None:
    result = invoke("results", "--loan", KF, "--scale", "SRM 987", db=demo_db)
    assert "SRM 987" in refused(result, 1, "--scale")  # SRM 987 has no δ44/40 on SRM 915a


def test_an_unknown_scale_names_the_scale_option(demo_db: Path) -> None:
    refused(invoke("results", "--scale", "No such ref", db=demo_db), 2, "--scale")


# ---------------------------------------------------------------- 6. plots


def assert_png(path: Path) -> None:
    data = path.read_bytes()
    assert data[:8] == PNG_SIGNATURE
    with Image.open(path) as image:
        assert image.format == "PNG"
        width, height = image.size
        image.load()  # decodes the whole image: a truncated file raises here
    assert 300 <= width <= 4000 and 200 <= height <= 3000 and width > height


def test_session_drift_plot_is_a_real_png(demo_db: Path, tmp_path: Path) -> None:
    session = ok_json(invoke("results", "--loan", KF, db=demo_db, as_json=True))[0]["session"]
    out = tmp_path / "drift.png"
    answer = ok_json(
        invoke("session", "plot", session, "--out", str(out), db=demo_db, as_json=True)
    )
    assert answer["out"] == str(out)
    # the demo Ca export has 33 'SRM 915a' rows (counted in the file)
    _header, *rows = kept_rows(INSTRUMENT / "ca-session-2026-11-24.csv")
    assert answer["standards"] == sum(1 for r in rows if r[1] == "SRM 915a") == 33
    assert_png(out)


@pytest.mark.parametrize("ratio", ["44/40", "87/86"])
def test_results_plot_against_age_is_a_real_png(demo_db: Path, tmp_path: Path, ratio: str) -> None:
    out = tmp_path / "age.png"
    result = invoke("results", "--loan", MDGC, "--plot", str(out), "--ratio", ratio, db=demo_db)
    assert result.exit_code == 0, result.stderr
    assert_png(out)


def test_a_plot_of_a_ratio_without_results_is_refused_and_writes_nothing(
    demo_db: Path, tmp_path: Path
) -> None:
    out = tmp_path / "none.png"
    result = invoke("results", "--loan", MDGC, "--plot", str(out), "--ratio", "43/44", db=demo_db)
    assert "43/44" in refused(result, 2, "--ratio")
    assert not out.exists()


# ---------------------------------------------------------------- 7. schemas of new outputs


def test_batch_and_reduction_outputs_validate_against_their_schemas(demo: Path) -> None:
    summary = ok_json(invoke("batch", "show", CA_BATCH, db=demo, as_json=True))
    validate(summary, "batch-summary.schema.json")
    session = ok_json(invoke("results", "--loan", KF, db=demo, as_json=True))[0]["session"]
    reduction = ok_json(invoke("session", "reduce", session, db=demo, actor=TECH, as_json=True))
    validate(reduction, "reduction.schema.json")
    del reduction["item"]["results"][0]["n"]  # the check has teeth
    with pytest.raises(ValidationError, match="'n'"):
        validate(reduction, "reduction.schema.json")


def _imported(demo: Path, tmp_path: Path) -> dict[str, Any]:
    ok_json(save_profile(demo, tmp_path, "halvard-ca", profile_text()))
    (cut, *_) = demo_cuts(demo, CA_BATCH)
    path = tmp_path / "one.csv"
    path.write_bytes(bench_export([(cut, 0.1, 0.05), ("rinse", 0.0, 0.0)]).csv_bytes())
    return dict(ok_json(import_file(demo, path, "halvard-ca")))


def test_the_imported_session_validates_against_the_session_import_schema(
    demo: Path, tmp_path: Path
) -> None:
    answer = _imported(demo, tmp_path)
    validate(answer, "session-import.schema.json")
    del answer["item"]["unmatched"]
    with pytest.raises(ValidationError, match="unmatched"):
        validate(answer, "session-import.schema.json")


def test_the_whole_session_import_document_validates(demo: Path, tmp_path: Path) -> None:
    validate(_imported(demo, tmp_path), "session-import.schema.json")


def test_profile_files_validate_against_the_mapping_profile_schema() -> None:
    for path in sorted(INSTRUMENT.glob("*-profile.toml")):  # mc-ca and mc-sr
        validate(tomllib.loads(path.read_text(encoding="utf-8")), "mapping-profile.schema.json")
    mine = tomllib.loads(profile_text("xlsx", "Bench run"))
    validate(mine, "mapping-profile.schema.json")
    del mine["columns"]["ratios"]  # the check has teeth
    with pytest.raises(ValidationError, match="ratios"):
        validate(mine, "mapping-profile.schema.json")
