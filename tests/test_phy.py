"""PHY objectives and the BER estimate against IEEE 802.3 and its worked figures."""

from __future__ import annotations

import numpy as np
import pytest

from linktriage.diagnosis import Model, diagnose
from linktriage.phy import ber_objective, estimate_ber, phy_name
from linktriage.simulate import render_polls, sample_parameters
from linktriage.verdicts import Verdict


def test_a_frame_error_ratio_of_1e7_on_125_octet_frames_is_a_ber_of_1e10() -> None:
    # IEEE 802.3 clause 40.6.1.3.1 (quoted in a PHY compliance-test manual): "A frame
    # error rate of 10^-7 for 125 octet frames is equivalent to a bit error rate of 10^-10".
    ber = estimate_ber(np.array([1e-7]), np.array([125 * 8.0]))
    assert ber[0] == pytest.approx(1e-10, rel=1e-6)


def test_a_ber_of_1e12_gives_a_fer_of_5_12e10_on_64_octet_frames() -> None:
    # P. Anslow, IEEE 802.3 reflector (2012): "a BER ... of 1 x 10^-12 is equivalent to an
    # Ethernet FER of 5.12 x 10^-10 for 512-bit (64-octet) frames". Inverting our estimate:
    ber = estimate_ber(np.array([5.12e-10]), np.array([512.0]))
    assert ber[0] == pytest.approx(1e-12, rel=1e-6)


@pytest.mark.parametrize(
    ("speed", "fiber", "name", "objective"),
    [
        (10**9, False, "1000BASE-T", 1e-10),  # IEEE 802.3 clause 40.6.1.3.1 (quoted)
        (10**9, True, "1000BASE-X", 1e-12),  # IEEE 802.3 HSSG reflector, 1999 (quoted)
        (10**7, False, "10BASE-T", 1e-8),  # same reflector message
        (10**10, True, "10GBASE-R", 1e-12),  # IEEE 802.3 clause 52 (from memory)
        (10**10, False, "10GBASE-T", 1e-12),  # 802.3an objective (quoted)
        (10**11, True, "100GBASE-R", 1e-12),  # 40/100G objective (quoted)
    ],
)
def test_phy_objectives(speed: int, fiber: bool, name: str, objective: float) -> None:
    assert phy_name(speed, fiber) == name
    assert ber_objective(name) == objective


def test_an_unknown_medium_at_a_speed_with_two_phys_has_no_objective() -> None:
    assert phy_name(10**9, None) is None
    assert ber_objective(None) is None


def _estimated_ber(verdict: Verdict, model: Model, n: int = 200) -> np.ndarray:
    rng = np.random.default_rng(11)
    params = sample_parameters([verdict] * n, rng)
    params[["speed_bps", "max_speed_bps", "fiber", "dot3", "hc"]] = [10**9, 10**9, 0.0, True, True]
    params["rx_util"] = 0.2
    params["window_s"] = 300.0
    # The physics only: no stray errors (a re-seated cord), which no objective speaks to.
    params["stray_errors"] = 0.0
    names = [f"port{i}" for i in range(n)]
    batch = diagnose(render_polls(params, rng, device=["sw"] * n, port=names), model)
    return np.array(batch.ber_estimate)


def test_simulated_cable_faults_exceed_the_1000base_t_objective(model: Model) -> None:
    ber = _estimated_ber(Verdict.CABLE_FAULT, model)
    assert np.all(ber > 1e-10)


def test_simulated_healthy_links_stay_within_the_1000base_t_objective(model: Model) -> None:
    ber = _estimated_ber(Verdict.HEALTHY, model)
    assert np.all(ber <= 1e-10)
