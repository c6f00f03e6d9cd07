"""PHY objectives, half duplex and the BER estimate against IEEE 802.3 and its worked figures."""

from __future__ import annotations

import numpy as np
import pytest

from linktriage.engine.measure.phy import (
    LOOSEST_OBJECTIVE,
    ber_objective,
    estimate_ber,
    frame_error_ratio,
    half_duplex_exists,
    objective_for,
    phy_name,
)


def test_a_frame_error_ratio_of_1e7_on_125_octet_frames_is_a_ber_of_1e10() -> None:
    # IEEE 802.3 clause 40.6.1.3.1 (quoted in a PHY compliance-test manual): "A frame
    # error rate of 10^-7 for 125 octet frames is equivalent to a bit error rate of 10^-10".
    ber = estimate_ber(np.array([1e-7]), np.array([125 * 8.0]))
    assert ber[0] == pytest.approx(1e-10, rel=1e-6)


def test_a_ber_of_1e12_gives_a_fer_of_5_12e10_on_64_octet_frames() -> None:
    # P. Anslow, IEEE 802.3 reflector (2012): "a BER ... of 1 x 10^-12 is equivalent to an
    # Ethernet FER of 5.12 x 10^-10 for 512-bit (64-octet) frames".
    assert estimate_ber(np.array([5.12e-10]), np.array([512.0]))[0] == pytest.approx(1e-12)
    assert frame_error_ratio(np.array([1e-12]), np.array([512.0]))[0] == pytest.approx(5.12e-10)


@pytest.mark.parametrize(
    ("speed", "fiber", "name", "objective"),
    [
        (10**9, False, "1000BASE-T", 1e-10),  # IEEE 802.3 clause 40.6.1.3.1 (quoted)
        (10**9, True, "1000BASE-X", 1e-12),  # IEEE 802.3 HSSG reflector, 1999 (quoted)
        (10**8, True, "100BASE-X", 1e-12),  # same reflector message
        (10**7, False, "10BASE-T", 1e-8),  # same reflector message
        # Unresolved between 1e-12 (reflector, 100BASE-X) and 1e-10 (a cabling trade
        # article, 100BASE-TX); the looser is used, so no verdict rests on the stricter.
        (10**8, False, "100BASE-TX", 1e-10),
        (10**10, True, "10GBASE-R", 1e-12),  # IEEE 802.3 clause 52 (from memory)
        (10**10, False, "10GBASE-T", 1e-12),  # 802.3an objective (quoted)
        (2_500_000_000, False, "2.5GBASE-T", 1e-12),  # 802.3bz objective (from memory)
        (5 * 10**9, False, "5GBASE-T", 1e-12),  # 802.3bz objective (from memory)
        (10**11, True, "100GBASE-R", 1e-12),  # 40/100G objective (quoted)
        (4 * 10**11, True, "400GBASE-R", 1e-13),  # IEEE 802.3bs objective (from memory)
    ],
)
def test_phy_objectives(speed: int, fiber: bool, name: str, objective: float) -> None:
    assert phy_name(speed, fiber) == name
    assert ber_objective(name) == objective
    assert objective_for(speed, fiber) == objective


def test_an_unknown_phy_is_held_to_the_loosest_objective_it_could_have() -> None:
    assert phy_name(10**9, None) is None
    assert objective_for(10**9, None) == 1e-10  # 1000BASE-T rather than 1000BASE-X
    assert objective_for(float("nan"), None) == LOOSEST_OBJECTIVE == 1e-8


def test_half_duplex_exists_only_up_to_a_gigabit_and_at_a_gigabit_only_on_copper() -> None:
    # IEEE 802.3: CSMA/CD half duplex up to 1000 Mb/s; 10 Gb/s and faster are full duplex
    # only (clause 44.1.1, from memory); 1000BASE-X settles duplex by clause 37
    # autonegotiation (common practice).
    # 2.5GBASE-T and 5GBASE-T are full duplex only (IEEE 802.3bz, from memory).
    speed = np.array([1e7, 1e8, 1e9, 1e9, 2.5e9, 5e9, 1e10, 1e10, np.nan])
    fiber = np.array([0.0, 1.0, 0.0, 1.0, 0.0, 0.0, 0.0, 1.0, np.nan])
    assert half_duplex_exists(speed, fiber).tolist() == [1, 1, 1, 0, 0, 0, 0, 0, 1]
