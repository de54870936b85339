"""The dissolution recovery's arithmetic and words, worked by hand (no database)."""

from __future__ import annotations

import math

import periodictable
import pytest

from tracker.domain.budget import Amount
from tracker.domain.recovery import (
    DEFAULT_WINDOW,
    Window,
    beyond_ceiling,
    recovery,
    recovery_words,
)

# periodictable 2.1 (CIAAW 2021 abridged standard atomic weights): w(Ca) in Ca10(PO4)6(OH)2
HAP_CA = periodictable.formula("Ca10(PO4)6(OH)2").mass_fraction[periodictable.Ca]


def test_a_single_fraction_gives_one_recovery_with_first_order_uncertainty() -> None:
    found = recovery("Ca", "hydroxyapatite", Amount(780.0, 7.8), Amount(2.0, 0.004), (HAP_CA,) * 2)
    assert found is not None
    by_hand = 780.0 / (2000.0 * HAP_CA)
    # independent inputs, first order: relative uncertainties add in quadrature (GUM 5.1.6)
    u = by_hand * math.sqrt((7.8 / 780.0) ** 2 + (0.004 / 2.0) ** 2)
    assert found.low == found.high == pytest.approx(by_hand, rel=1e-12)
    assert found.u_low == pytest.approx(u, rel=1e-12)
    assert not found.is_range


def test_a_range_of_fractions_gives_a_range_flagged_only_when_wholly_outside() -> None:
    fractions = (0.6 * HAP_CA, 0.8 * HAP_CA)
    held = 0.85 * 2000 * 0.6 * HAP_CA  # 85 % at the low fraction, 63.75 % at the high one
    found = recovery("Ca", "bone", Amount(held, 1.0), Amount(2.0, 0.001), fractions)
    assert found is not None and found.is_range
    assert found.low == pytest.approx(0.6375) and found.high == pytest.approx(0.85)
    assert found.outside  # all of 63.8-85 % below 90 %
    assert not Window(0.80, 1.20).holds(0.5, 0.79)
    assert Window(0.80, 1.20).holds(0.5, 0.81)  # one end inside is enough


def test_no_recovery_without_a_powder() -> None:
    assert recovery("Ca", "x", Amount(1.0, 0.1), Amount(0.0, 0.001), (0.4, 0.4)) is None


def test_beyond_the_ceiling_only_past_two_standard_uncertainties() -> None:
    powder = Amount(0.5, 0.0)
    most = 500 * HAP_CA  # ug in 0.5 mg of hydroxyapatite
    assert beyond_ceiling(Amount(390.0, 7.8), powder, HAP_CA)  # 78 % Ca
    assert not beyond_ceiling(Amount(most + 19.0, 10.0), powder, HAP_CA)  # within 2u = 20
    assert beyond_ceiling(Amount(most + 21.0, 10.0), powder, HAP_CA)


def test_words_state_a_range_and_the_window_when_outside() -> None:
    found = recovery("Ca", "enamel", Amount(600.0, 6.0), Amount(2.0, 0.0004), (0.36, 0.4))
    assert found is not None
    said = recovery_words(found)
    assert said.startswith("Ca recovery 75.0 ± 0.8 % to 83.3 ± 0.8 % (enamel)"), said
    assert said.endswith("outside 90–110 %") and DEFAULT_WINDOW.said() == "90–110 %"
    assert "± 0.0 " not in said
