"""A whole bench session driven only through the CLI, every answer read back as JSON."""

from __future__ import annotations

import math
from datetime import date
from decimal import Decimal
from pathlib import Path
from typing import Any

import pytest

from tests.cli.conftest import future_due_day, invoke, ok_json, past_day

MANAGER, TECH = "odile", "wenna"
# Inputs as a person types them; expected values are computed from these below.
DRILL_TARE, DRILL_GROSS, MICRO = "1203.557 mg", "1206.118 mg", "0.001 mg"
TAKEN = "2.400 mg"  # 913 ug of Ca from it: 38 % Ca, which enamel can hold
VIAL_TARE, VIAL_GROSS, ANALYTICAL = "6.3812 g", "8.3997 g", "0.1 mg"
CONC, REL_U_PERCENT = Decimal("452.3"), Decimal("1.5")
ALIQ_TARE, ALIQ_GROSS, FINE = "3.10214 g", "3.12537 g", "0.01 mg"


def mg(text: str) -> Decimal:
    number, unit = text.split()
    return Decimal(number) * {"mg": Decimal(1), "g": Decimal(1000)}[unit]


def u_by_difference(readability_mg: Decimal) -> float:
    # GUM (JCGM 100:2008) F.2.2.1: a reading of resolution d is uniform over ±d/2, so
    # u = d/√12 per reading; a mass by difference uses two readings: u = √2·d/√12 = d/√6.
    return float(readability_mg) / math.sqrt(6)


def product_u(a: float, u_a: float, b: float, u_b: float) -> float:
    """Standard uncertainty of a·b for independent a and b (GUM 5.1.2, first order)."""
    return math.hypot(b * u_a, a * u_b)


close = pytest.approx


class Session:
    def __init__(self, path: Path) -> None:
        self.path = path
        self.seqs: list[int] = []
        self.last_hash = ""

    def write(self, *args: str, actor: str = MANAGER) -> Any:
        answer = ok_json(invoke(*args, db=self.path, actor=actor, as_json=True))
        self.seqs.append(answer["event_seq"])
        self.last_hash = answer["event_hash"]
        return answer["item"]

    def read(self, *args: str) -> Any:
        return ok_json(invoke(*args, db=self.path, as_json=True))


def test_full_session_through_the_cli(tmp_path: Path) -> None:
    s = Session(tmp_path / "lab.sqlite")
    opened = ok_json(
        invoke("init", "--code", MANAGER, "--name", "Odile Farrant", db=s.path, as_json=True)
    )
    assert opened["operator"] == MANAGER and opened["role"] == "manager"
    assert s.path.exists()

    public = tmp_path / f"{TECH}.pub"
    assert ok_json(invoke("key", "new", "--out", str(public), actor=TECH, as_json=True))
    op = s.write(
        "operator",
        "add",
        TECH,
        "--name",
        "Wenna Driscoll",
        "--role",
        "technician",
        "--key",
        str(public),
    )
    assert (op["code"], op["role"], op["active"]) == (TECH, "technician", True)
    assert op["id"].startswith("OP-")

    hall = s.write("location", "add", "building", "Hall Q")
    room = s.write("location", "add", "room", "Q-2.11", "--in", hall["id"])
    box = s.write("location", "add", "box", "Powder box 5", "--in", room["id"])
    box2 = s.write("location", "add", "box", "Powder box 6", "--in", room["id"])
    assert box["path"] == "Hall Q / Q-2.11 / Powder box 5"
    assert (room["kind"], box["kind"]) == ("room", "box")

    lender = s.write("lender", "add", "Brackwater Shore Museum", "--code", "BSM")
    assert lender["id"].startswith("LE-") and lender["institution_code"] == "BSM"

    due = future_due_day()
    loan = s.write(
        "loan",
        "add",
        "--lender",
        lender["id"],
        "--reference",
        "BSM-L-9",
        "--title",
        "Invented shark teeth",
        "--borrower",
        "Odile Farrant",
        "--tissues",
        "Enameloid",
        "--max-per-specimen",
        "4 mg",
        "--max-total",
        "12 mg",
        "--max-specimens",
        "3",
        "--received",
        past_day(),
        "--due",
        due,
    )
    terms = loan["terms"]
    assert loan["reference"] == "BSM-L-9" and loan["status"] == "open"
    assert terms["permitted_tissues"] == ["enameloid"]
    assert (terms["max_mass_per_specimen_mg"], terms["max_total_mass_mg"]) == (4.0, 12.0)
    assert terms["due_on"] == due

    spec = s.write(
        "specimen",
        "add",
        "--loan",
        "BSM-L-9",
        "--catalog",
        "BSM F-31",
        "--taxon",
        "Lamniformes indet.",
        "--element",
        "tooth",
    )
    assert spec["status"] == "expected" and spec["loan"] == "BSM-L-9"

    checked = s.write(
        "checkin", spec["id"], "--condition", "complete", "--to", box["id"], actor=TECH
    )
    assert checked["status"] == "on_hand" and checked["location"] == box["path"]
    assert checked["condition_in"] == "complete"

    powder = s.write(
        "drill",
        spec["id"],
        "--tissue",
        "Enameloid",
        "--site",
        "labial face",
        "--tare",
        DRILL_TARE,
        "--gross",
        DRILL_GROSS,
        "--readability",
        MICRO,
        "--to",
        box["id"],
        actor=TECH,
    )
    drilled = mg(DRILL_GROSS) - mg(DRILL_TARE)
    assert powder["mass_mg"] == close(float(drilled), abs=1e-9)
    assert powder["mass_u_mg"] == close(u_by_difference(mg(MICRO)), rel=1e-9)
    assert (powder["tare_mg"], powder["gross_mg"]) == (
        float(mg(DRILL_TARE)),
        float(mg(DRILL_GROSS)),
    )
    assert powder["tissue"] == "enameloid" and powder["specimen"] == spec["id"]
    assert powder["status"] == "available" and powder["location"] == box["path"]

    sol = s.write(
        "dissolve",
        powder["id"],
        "--acid",
        "2 M HNO3",
        "--powder-taken",
        TAKEN,
        "--vial-tare",
        VIAL_TARE,
        "--vial-gross",
        VIAL_GROSS,
        "--readability",
        ANALYTICAL,
        actor=TECH,
    )
    solution_g = float((mg(VIAL_GROSS) - mg(VIAL_TARE)) / 1000)
    solution_u_g = u_by_difference(mg(ANALYTICAL)) / 1000
    assert sol["powder"] == powder["id"] and sol["powder_mass_mg"] == float(mg(TAKEN))
    assert sol["powder_mass_u_mg"] == close(u_by_difference(mg(MICRO)), rel=1e-9)
    assert sol["solution_mass_g"] == close(solution_g, abs=1e-12)
    assert sol["solution_mass_u_g"] == close(solution_u_g, rel=1e-9)

    conc = s.write(
        "concentration",
        sol["id"],
        "--element",
        "Ca",
        "--value",
        f"{CONC} ug/g",
        "--rel-u",
        str(REL_U_PERCENT),
        "--method",
        "ICP-OES",
        actor=TECH,
    )
    conc_u = float(CONC * REL_U_PERCENT / 100)
    assert (conc["element"], conc["value_ug_per_g"]) == ("Ca", float(CONC))
    assert conc["u_ug_per_g"] == close(conc_u)
    assert conc["element_ug"] == close(solution_g * float(CONC))
    assert conc["element_u_ug"] == close(product_u(solution_g, solution_u_g, float(CONC), conc_u))

    aliquot = s.write(
        "aliquot",
        sol["id"],
        "--tare",
        ALIQ_TARE,
        "--gross",
        ALIQ_GROSS,
        "--readability",
        FINE,
        "--to",
        box2["id"],
        actor=TECH,
    )
    aliquot_g = float((mg(ALIQ_GROSS) - mg(ALIQ_TARE)) / 1000)
    aliquot_u_g = u_by_difference(mg(FINE)) / 1000
    assert aliquot["solution"] == sol["id"] and aliquot["purpose"] == "isotopes"
    assert aliquot["mass_g"] == close(aliquot_g, abs=1e-12)
    assert aliquot["mass_u_g"] == close(aliquot_u_g, rel=1e-9)
    assert aliquot["element"] == "Ca"
    assert aliquot["element_ug"] == close(aliquot_g * float(CONC))
    assert aliquot["element_u_ug"] == close(product_u(aliquot_g, aliquot_u_g, float(CONC), conc_u))

    ref = s.write("reference", "add", "Lab carbonate QX", "--element", "Ca", "--matrix", "CaCO3")
    assert ref["id"].startswith("RM-") and ref["element"] == "Ca"

    batch = s.write(
        "batch",
        "create",
        "--name",
        "Ca QX-1",
        "--date",
        date.today().isoformat(),
        "--element",
        "Ca",
        "--resin",
        "DGA, 50-100 um",
        "--scheme",
        "load; rinse; elute",
        "--cuts",
        "matrix, Ca",
        actor=TECH,
    )
    assert batch["cut_names"] == ["matrix", "Ca"] and batch["positions"] == 0

    sample = s.write("batch", "add", batch["id"], "--sample", aliquot["id"], actor=TECH)
    blank = s.write("batch", "add", batch["id"], "--blank", actor=TECH)
    refpos = s.write(
        "batch",
        "add",
        batch["id"],
        "--reference",
        "lab carbonate qx",
        "--loaded-ug",
        "10",
        actor=TECH,
    )
    assert [p["slot"] for p in (sample, blank, refpos)] == [1, 2, 3]
    assert [p["kind"] for p in (sample, blank, refpos)] == ["sample", "blank", "reference"]
    assert sample["holds"] == aliquot["id"]
    assert sample["loaded_ug"] == close(aliquot["element_ug"])
    assert blank["holds"] is None and blank["loaded_ug"] is None
    assert refpos["holds"] == "Lab carbonate QX" and refpos["loaded_ug"] == 10.0

    moved = s.write("move", powder["id"], "--to", box2["id"], "--note", "desiccator", actor=TECH)
    assert moved["id"] == powder["id"] and moved["location"] == box2["path"]

    # Every write appended exactly one event, numbered right after the previous one.
    assert s.seqs == list(range(2, 2 + len(s.seqs)))

    shown = s.read("show", spec["id"])
    item = shown["item"]
    assert item["id"] == spec["id"] and item["status"] == "on_hand"
    assert [a["id"] for a in shown["ancestors"]] == [lender["id"], loan["id"]]
    assert shown["location"] == box["path"]
    [p_node] = item["children"]
    assert p_node["id"] == powder["id"]
    assert p_node["facts"]["remaining_mg"] == close(float(drilled - mg(TAKEN)), abs=1e-9)
    [s_node] = p_node["children"]
    assert s_node["id"] == sol["id"]
    assert s_node["facts"]["remaining_g"] == close(solution_g - aliquot_g, abs=1e-12)
    [a_node] = s_node["children"]
    assert a_node["id"] == aliquot["id"] and a_node["status"] == "consumed"
    [pos_node] = a_node["children"]
    assert pos_node["id"] == sample["id"]
    history = [e["action"] for e in shown["history"]]
    assert history == ["specimen.added", "specimen.checked_in", "powder.drilled"]

    [line] = s.read("overview")
    assert (line["id"], line["reference"], line["status"]) == (loan["id"], "BSM-L-9", "open")
    assert (line["specimens"], line["on_hand"], line["sampled"]) == (1, 1, 1)
    assert line["drilled_mg"] == close(float(drilled))
    assert line["used_fraction"] == close(float(drilled) / 12)
    assert line["days_left"] == (date.fromisoformat(due) - date.today()).days

    report = s.read("ledger", "verify")
    assert report["ok"] is True and report["broken_seq"] is None
    assert report["events"] == report["head_seq"] == s.seqs[-1]
    assert report["head_hash"] == s.last_hash
