"""An item's view — what came from it, its parents, its place, its history — is read in the
same number of statements however large its tree: one per level, never one per node
(every kind of item, both backends)."""

from __future__ import annotations

from dataclasses import dataclass

import pytest

from tests import factories as make
from tests.services.test_scan_queries import counted
from tracker.db.database import Database
from tracker.services.bench import chemistry, columns
from tracker.services.read import lineage
from tracker.services.read.lineage import Node


@dataclass
class Tree:
    """One item of each kind, from one loan's lab."""

    lender: str
    loan: str
    specimen: str
    powder: str
    solution: str
    aliquot: str
    batch: str
    position: str
    cut: str


def _grown(db: Database, width: int) -> Tree:
    """A loan whose every item has ``width`` children, down to the columns' cuts."""
    loan = make.loan(db, max_specimens_sampled=20, max_total_mass="400 mg")
    batch = make.batch(db)
    first: dict[str, str] = {}
    for _ in range(width):
        specimen = make.specimen(db, loan)
        first.setdefault("specimen", specimen)
        for _ in range(width):
            powder = make.powder(db, specimen, "2.000")
            first.setdefault("powder", powder)
            for _ in range(width):
                solution = make.solution(db, powder, grams="0.1000", taken="0.200 mg")
                make.concentration(db, solution, "500 ug/g")
                first.setdefault("solution", solution)
                for _ in range(width):
                    aliquot = make.aliquot(db, solution, grams="0.0200")
                    first.setdefault("aliquot", aliquot)
                    request = {"batch": batch, "kind": "sample", "aliquot": aliquot}
                    position = chemistry.add_position(db, "tech", request).item.id
                    first.setdefault("position", position)
                    recovered = {"position": position, "cut": "Ca", "recovered": "9.000 ug"}
                    first.setdefault("cut", columns.record_cut(db, "tech", recovered).item.id)
    shown = lineage.show_item(db, loan)
    lender = shown.ancestors[0].id
    return Tree(lender=lender, loan=shown.item.id, batch=batch, **first)


def _nodes(node: Node) -> int:
    return 1 + sum(_nodes(child) for child in node.children)


@pytest.mark.parametrize("kind", list(Tree.__dataclass_fields__))
def test_an_item_s_view_reads_a_fixed_number_of_statements(db: Database, kind: str) -> None:
    small, large = _grown(db, 1), _grown(db, 2)
    reads, sizes = [], []
    for tree in (small, large):
        item = getattr(tree, kind)
        lineage.show_item(db, item)  # the pool's connections made
        with counted(db) as statements:
            shown = lineage.show_item(db, item)
        reads.append(sum(s.lstrip().upper().startswith("SELECT") for s in statements))
        sizes.append(_nodes(shown.item))
    if kind not in ("aliquot", "position", "cut"):  # one column, one cut each here
        assert sizes[1] > sizes[0], sizes  # the larger tree really is larger
    assert reads[0] == reads[1], (kind, reads, sizes)


def test_a_cut_s_origins_are_named_as_people_know_them(db: Database) -> None:
    """Each step above a cut says the name a person knows it by beside its ID: the lender's
    institution code, the loan's reference, the specimen's catalogue number, what each vial
    holds; and the item screen and ``tracker show`` say it the same way."""
    from tracker.present.items import ancestry
    from tracker.services.loans import lending, specimens

    tree = _grown(db, 1)
    (lender,) = [v for v in lending.list_lenders(db) if v.id == tree.lender]
    (loan,) = [v for v in lending.list_loans(db) if v.id == tree.loan]
    (specimen,) = [v for v in specimens.list_specimens(db) if v.id == tree.specimen]
    cut = lineage.show_item(db, tree.cut)
    assert [a.id for a in cut.ancestors] == [
        tree.lender,
        tree.loan,
        tree.specimen,
        tree.powder,
        tree.solution,
        tree.aliquot,
        tree.position,
    ]
    names = [a.name for a in cut.ancestors]
    assert names[0] == (lender.institution_code or lender.name)
    assert names[1:3] == [loan.reference, specimen.catalog_number]
    assert names[3].endswith("powder") and names[4] == "solution"
    assert names[5].endswith("aliquot") and names[6].startswith("column ")
    assert ancestry(cut.ancestors).split(" › ")[2] == f"{names[2]} {tree.specimen}"


def test_names_of_many_ids_in_a_few_queries(db: Database) -> None:
    """The ledger names the items of hundreds of events at once: a few statements for all,
    a text that is no ID (an event about the lab) or names nothing is left out, not refused."""
    from tracker.domain.ids import Kind, format_id

    tree = _grown(db, 2)
    chain = lineage.show_item(db, tree.cut).ancestors
    refs = [a.id for a in chain] + [tree.cut, "", "settings", format_id(Kind.SPECIMEN, 99999)]
    with counted(db) as statements:
        names = lineage.names_of(db, refs)
    assert names == {a.id: a.name for a in chain} | {tree.cut: "Ca cut"}
    assert len(statements) <= len(chain) + 3  # one per kind, the position's batch, the prefix
