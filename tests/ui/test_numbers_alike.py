"""An item reads the same in the CLI and in the interface: the same numbers, the same digits.

``tracker show`` and the item screen's lineage tree once wrote numbers each their own way
(an ⁸⁷Sr/⁸⁶Sr ratio as "δ87/86 0.71 ± 0.00" on screen, 0.707880 ± 0.000019 in the CLI).
Each test opens one item in both and compares every decimal number, in order; the expected
texts are worked by hand from the stored values with Python's own formatting.
"""

from __future__ import annotations

import re

import pytest
from textual.widgets import Tree
from textual.widgets.tree import TreeNode

from tests.cli.conftest import invoke
from tests.ui.conftest import Lab, scan, screen_as, settle, until
from tracker.services.bench import columns, drilling
from tracker.services.read import lineage
from tracker.services.read.item_facts import CutFacts, CutResult
from tracker.ui.screens.item import ItemScreen

NUMBER = re.compile(r"[+-]?\d+\.\d+")
SR_SPECIMEN, SR_CUT = "SP-00012-Q", "CU-00012-F"  # the demo's brachiopod, its Sr cut
CA_SPECIMEN, CA_CUT = "SP-00004-Q", "CU-00002-J"  # the demo's shark tooth, its Ca cut
CA_COLUMN = "CP-00002-6"


def _labels(node: TreeNode[str]) -> list[str]:
    """Every line of a lineage tree, parents before children (as the CLI prints them)."""
    return [str(node.label), *(line for child in node.children for line in _labels(child))]


async def _on_screen(lab: Lab, item: str) -> list[str]:
    app = lab.app()
    async with app.run_test(headless=True, size=(200, 50)) as pilot:
        await settle(pilot)
        await scan(pilot, item)
        screen = screen_as(pilot, ItemScreen)
        tree: Tree[str] = screen.query_one("#lineage", Tree)
        await until(pilot, lambda: tree.root.data == item)
        return _labels(tree.root)


def _printed(lab: Lab, item: str) -> str:
    """``tracker show``'s lineage: from the item's own line to its custody history."""
    result = invoke("show", item, db=lab.db_path)
    assert result.exit_code == 0, result.stderr
    return result.stdout[result.stdout.index(f"{item}  ") : result.stdout.index("Custody history")]


def _result(lab: Lab, cut: str, ratio: str) -> CutResult:
    db = lab.open()
    try:
        facts = lineage.show_item(db, cut).item.facts
    finally:
        db.close()
    assert isinstance(facts, CutFacts)
    return next(r for r in facts.results if r.ratio == ratio)


async def _both(lab: Lab, item: str) -> tuple[str, str]:
    """The item's lineage in the interface and in the CLI, after checking their numbers agree."""
    screen = "\n".join(await _on_screen(lab, item))
    printed = _printed(lab, item)
    assert NUMBER.findall(screen), screen  # the premise: the tree shows numbers at all
    assert NUMBER.findall(screen) == NUMBER.findall(printed)
    return screen, " ".join(printed.split())  # the CLI's lines wrap at 80 columns


@pytest.mark.parametrize("specimen", [SR_SPECIMEN, CA_SPECIMEN])
async def test_the_cli_and_the_interface_show_the_same_numbers(lab: Lab, specimen: str) -> None:
    await _both(lab, specimen)


async def test_a_strontium_ratio_has_six_decimals_in_both(lab: Lab) -> None:
    result = _result(lab, SR_CUT, "87/86")
    # premise: a 2SD of 1.0e-5 to 3.5e-5 keeps two significant digits, at the 6th decimal
    assert result.two_sd is not None and 0.000010 <= result.two_sd < 0.0000355
    expected = f"{result.value:.6f} ± {result.two_sd:.6f} (2SD, n={result.n})"
    screen, printed = await _both(lab, SR_SPECIMEN)
    assert expected in screen and expected in printed


async def test_a_calcium_delta_has_the_places_of_its_two_sd_in_both(lab: Lab) -> None:
    result = _result(lab, CA_CUT, "44/40")
    # premise: a 2SD of 0.100 to 0.354 ‰ keeps two significant digits: two decimals
    assert result.two_sd is not None and 0.100 <= result.two_sd < 0.355
    expected = f"δ44/40 {result.value:+.2f} ± {result.two_sd:.2f} ‰ (2SD, n={result.n})"
    screen, printed = await _both(lab, CA_SPECIMEN)
    assert expected in screen and expected in printed


async def test_a_typed_mass_keeps_its_zeros_and_no_uncertainty_is_no_plus_minus(lab: Lab) -> None:
    db = lab.open()
    try:
        drilling.drill(
            db,
            "ines",
            {
                "specimen": CA_SPECIMEN,
                "tissue": "enameloid",
                "tare": "1000.000 mg",
                "gross": "1000.320 mg",
                "readability": "0.01 mg",
            },
        )
        columns.record_cut(
            db, "ines", {"position": CA_COLUMN, "cut": "matrix", "recovered": "0.80 ug"}
        )
    finally:
        db.close()
    screen, printed = await _both(lab, CA_SPECIMEN)
    # by hand: 0.320 mg as weighed, u = 0.01 mg / sqrt(6) = 0.0041 mg, whose leading digits
    # (408) keep one significant digit: 0.004 (Particle Data Group's rule; from memory)
    assert "0.320 ± 0.004 mg" in screen and "0.320 ± 0.004 mg" in printed
    # a cut recovered with no uncertainty stated: its typed digits, and no "±" at all
    assert "recovered 0.80 µg ·" in screen and "recovered 0.80 µg ·" in printed
