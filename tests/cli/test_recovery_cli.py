"""`tracker show` states a solution's dissolution recovery; `tracker concentration` refuses a
value its powder cannot hold in one line, and records it with --confirm-implausible."""

from __future__ import annotations

import periodictable
import pytest

from tests.cli.conftest import Lab, counts, invoke, ok_json

# periodictable 2.1 (CIAAW 2021 abridged standard atomic weights): w(Ca) in Ca10(PO4)6(OH)2
HAP_CA = periodictable.formula("Ca10(PO4)6(OH)2").mass_fraction[periodictable.Ca]


def test_show_states_a_solution_s_recovery_and_its_aliquot_s_element(lab: Lab) -> None:
    # the lab: 1.500 mg of enamel (enamel bioapatite, 90-100 % of hydroxyapatite's Ca)
    # dissolved into 1.0000 g, 450 ug/g Ca: 450 ug of the 1500 w ug to 1500 (0.9 w) ug
    shown = ok_json(invoke("show", lab.solution, db=lab.path, as_json=True))
    (found,) = shown["item"]["facts"]["recoveries"]
    assert found["low"] == pytest.approx(450 / (1500 * HAP_CA), rel=1e-9)
    assert found["high"] == pytest.approx(450 / (1500 * 0.9 * HAP_CA), rel=1e-9)
    assert found["outside"] is True  # 75-84 %: the whole range below 90 %
    human = invoke("show", lab.solution, db=lab.path)
    assert human.exit_code == 0
    flat = " ".join(human.stdout.split())
    assert "Ca recovery" in flat and "(enamel bioapatite) outside 90–110 %" in flat
    aliquot = ok_json(
        invoke(
            "aliquot",
            lab.solution,
            "--tare",
            "2.0000 g",
            "--gross",
            "2.1000 g",
            db=lab.path,
            actor=lab.technician,
            as_json=True,
        )
    )["item"]["id"]
    human = invoke("show", aliquot, db=lab.path)
    flat = " ".join(human.stdout.split())
    assert "Ca 45" in flat  # 0.1 g x 450 ug/g = 45 ug


def test_an_impossible_concentration_is_refused_then_confirmed(lab: Lab) -> None:
    argv = ["concentration", lab.solution, "--element", "Ca", "--value", "4500 ug/g"]
    argv += ["--rel-u", "1.5"]
    before = counts(lab.path)
    refused = invoke(*argv, db=lab.path, actor=lab.technician)
    assert refused.exit_code == 1
    line = refused.stderr.strip()
    assert "--value" in line and "likely a typo" in line and "--confirm-implausible" in line
    assert counts(lab.path) == before
    confirmed = ok_json(
        invoke(*argv, "--confirm-implausible", db=lab.path, actor=lab.technician, as_json=True)
    )
    assert float(confirmed["item"]["value_ug_per_g"]) == 4500
    history = ok_json(invoke("show", lab.solution, db=lab.path, as_json=True))["history"]
    assert history[-1]["payload"]["confirmed_implausible"]["material"] == "enamel bioapatite"


def test_the_recovery_window_is_shown_and_set_by_a_manager_only(lab: Lab) -> None:
    shown = ok_json(invoke("recovery-window", db=lab.path, as_json=True))
    assert (shown["low_percent"], shown["high_percent"], shown["default"]) == (90, 110, True)
    before = counts(lab.path)
    refused = invoke("recovery-window", "70", "90", db=lab.path, actor=lab.technician)
    assert refused.exit_code == 1 and counts(lab.path) == before
    ok_json(invoke("recovery-window", "70", "90", db=lab.path, actor=lab.manager, as_json=True))
    human = invoke("recovery-window", db=lab.path)
    assert "70–90 %" in human.stdout and "default" not in human.stdout
    # 75-84 % now lies within the lab's window: no flag
    facts = ok_json(invoke("show", lab.solution, db=lab.path, as_json=True))["item"]["facts"]
    assert facts["recoveries"][0]["outside"] is False
