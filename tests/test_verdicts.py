"""The verdicts: one module each, gathered by the registry in the format's order, every part
filled, and the checks and cautions each one carries for the port at hand."""

from __future__ import annotations

import json
import re
from pathlib import Path

import numpy as np
import pytest

from linktriage.engine.diagnosis.batch import DiagnosisBatch
from linktriage.engine.diagnosis.loaded_model import Model
from linktriage.engine.diagnosis.pipeline import diagnose
from linktriage.engine.format.answers import Verdict
from linktriage.engine.measure.signs import Signs
from linktriage.engine.model.features import FEATURE_NAMES
from linktriage.engine.simulate.ports import TRAINING, base
from linktriage.engine.verdict_kit.declaration import (
    NEEDS,
    SHORT,
    Caution,
    GuardVerdict,
    Touch,
    TreeVerdict,
)
from linktriage.engine.verdict_kit.readings import PortGroup
from linktriage.engine.verdicts import (
    GUARD_VERDICTS,
    KINDS,
    TREE,
    TREE_VERDICTS,
    VERDICTS,
    cautions_for,
    kind_of,
)

from helpers import T0, line, package_copy, polls, run_in_copy

DOCS = Path(__file__).parents[1] / "docs" / "snapshot-format.md"


def _format_ids() -> list[str]:
    """The ids of docs/snapshot-format.md's table of verdicts, in its order."""
    section = DOCS.read_text().split("## Verdicts", 1)[1].split("\n## ", 1)[0]
    return re.findall(r"^\| `([a-z_]+)` \|", section, re.MULTILINE)


def _still_to_come() -> list[str]:
    """The ids docs/snapshot-format.md says this release does not answer yet."""
    said = DOCS.read_text().split("**This release.**", 1)[1].split("\n\n", 1)[0]
    said = " ".join(said.split())
    if "listed here is never answered):" not in said:
        return []
    listed = said.split("listed here is never answered):", 1)[1].split(".", 1)[0]
    return re.findall(r"`([a-z_]+)`", listed)


def test_the_registry_holds_the_formats_verdicts_in_its_order() -> None:
    # SNAPSHOT-FORMAT 1.2's table, less the verdicts the document says are still to come:
    # every id is declared by a module or named as not answered, never both.
    ids, to_come = _format_ids(), _still_to_come()
    assert len(ids) == 19
    assert set(to_come) <= set(ids) and not set(to_come) & set(VERDICTS)
    assert list(VERDICTS) == [i for i in ids if i not in to_come]
    assert [k.listed for k in KINDS] == sorted(k.listed for k in KINDS)
    assert [ids[k.listed - 1] for k in KINDS] == list(VERDICTS)


def test_the_states_before_the_tree_are_answered_before_it() -> None:
    # SNAPSHOT-FORMAT 1.2: insufficient_traffic, link_down, admin_down and no_data are
    # answered before the tree, and so are port_disabled and poe_fault here (rules of RFC
    # 3621 and the device's own reason, which a tree could only copy); the rest by it. Which
    # is which is each module's declaration, not a position.
    assert set(GUARD_VERDICTS) == {
        "insufficient_traffic", "link_down", "admin_down", "no_data", "port_disabled",
        "poe_fault",
    }  # fmt: skip
    assert set(TREE_VERDICTS) == set(VERDICTS) - set(GUARD_VERDICTS)
    assert all(isinstance(kind_of(v), GuardVerdict) for v in GUARD_VERDICTS)
    assert all(isinstance(kind_of(v), TreeVerdict) for v in TREE_VERDICTS)


def test_an_id_no_module_declares_is_refused() -> None:
    with pytest.raises(ValueError, match="'tx_fault' is not a verdict"):
        kind_of("tx_fault")


@pytest.mark.parametrize("verdict", VERDICTS)
def test_every_verdict_fills_every_part(verdict: Verdict, demo_batch: DiagnosisBatch) -> None:
    kind = kind_of(verdict)
    assert kind.title and kind.meaning and kind.checks
    assert kind.checks_for(fiber=False) and kind.checks_for(fiber=True)
    # Its evidence is worded for any port of the demo: one list of readings per port.
    rows = list(range(len(demo_batch)))
    evidence = kind.evidence(PortGroup(demo_batch, rows))
    assert len(evidence) == len(rows)
    assert all(item["said"] and item["source"] for items in evidence for item in items)
    if isinstance(kind, TreeVerdict):
        assert kind.needs and kind.phrases and kind.prior_share > 0
        signs = Signs.read(demo_batch.measures)
        for need in kind.needs:
            assert need.needs and need.source
            assert need.holds(signs).shape == (len(demo_batch),)
        # Its signature turns healthy simulated ports into its fault, in place.
        params = base(50, np.random.default_rng(3), TRAINING)
        before = params.copy()
        kind.signature(params, np.random.default_rng(4), TRAINING)
        assert len(params) == 50
        assert kind.severity is None or not params.equals(before)
    else:
        assert kind.not_judged and kind.demo is not None


def test_exactly_one_verdict_the_tree_answers_is_not_a_fault() -> None:
    calm = [k.verdict for k in KINDS if isinstance(k, TreeVerdict) and k.severity is None]
    assert calm == ["healthy"]


@pytest.mark.parametrize(
    "verdict",
    ["cable_fault", "unidirectional", "link_down", "optic_degraded"],
)
def test_fiber_work_always_warns_never_to_look_into_the_fiber(verdict: Verdict) -> None:
    assert Caution.FIBER_EYES in kind_of(verdict).cautions_for(poe=False, fiber=True)


def test_copper_cable_work_on_a_poe_port_warns_that_unplugging_powers_off() -> None:
    cable = kind_of("cable_fault")
    with_poe = cable.cautions_for(poe=True, fiber=False)
    without = cable.cautions_for(poe=False, fiber=False)
    assert Caution.POE_POWER in with_poe
    assert Caution.POE_POWER not in without
    assert Caution.FIBER_EYES not in without


def test_an_unknown_medium_is_treated_as_possibly_fiber() -> None:
    assert Caution.FIBER_EYES in kind_of("cable_fault").cautions_for(poe=None, fiber=None)


def test_cable_work_mentions_ladders_and_mains_and_defers_to_local_codes() -> None:
    notes = kind_of("cable_fault").cautions_for(poe=False, fiber=False)
    assert Caution.WORK_AT_HEIGHT in notes
    assert Caution.MAINS in notes
    assert notes[-1] == Caution.LOCAL_CODES


@pytest.mark.parametrize("verdict", VERDICTS)
def test_any_caution_list_ends_by_deferring_to_local_codes(verdict: Verdict) -> None:
    notes = kind_of(verdict).cautions_for(poe=True, fiber=True)
    assert not notes or notes[-1] == Caution.LOCAL_CODES


def test_nothing_to_touch_means_no_cautions() -> None:
    for verdict in ("healthy", "congestion", "no_data"):
        assert kind_of(verdict).cautions_for(poe=True, fiber=True) == []


def test_fiber_cable_checks_speak_of_cleaning_and_scopes_not_pairs() -> None:
    cable = kind_of("cable_fault")
    fiber = " ".join(c.text for c in cable.checks_for(fiber=True))
    copper = " ".join(c.text for c in cable.checks_for(fiber=False))
    assert "fiber scope" in fiber
    assert "pairs" in copper and "pairs" not in fiber


def _first(verdict: str, count: int, *, poe: bool, fiber: bool) -> list[Caution]:
    kind = kind_of(verdict)
    checks = [c.text for c in kind.checks_for(fiber=fiber)[:count]]
    return cautions_for(checks, [c.value for c in kind.cautions_for(poe=poe, fiber=fiber)])


def test_looking_needs_no_caution_and_unplugging_a_poe_port_needs_its_caution_first() -> None:
    # The first copper cable check only looks at the cords; the second swaps one, which
    # switches off what a PoE port feeds (IEEE 802.3af/at/bt power; common practice to
    # agree a time first).
    assert _first("cable_fault", 1, poe=True, fiber=False) == []
    assert _first("cable_fault", 2, poe=True, fiber=False) == [
        Caution.POE_POWER,
        Caution.SERVICE_BREAK,
        Caution.LOCAL_CODES,
    ]
    assert Caution.POE_POWER not in _first("cable_fault", 2, poe=False, fiber=False)


def test_opening_a_fiber_end_brings_the_eye_caution_to_the_first_screen() -> None:
    # IEC 60825-1 laser classes: never look into a fiber end (the caution's own source).
    assert Caution.FIBER_EYES in _first("optic_degraded", 2, poe=False, fiber=True)
    assert _first("optic_degraded", 1, poe=False, fiber=True) == []  # a comparison


def test_a_caution_the_port_does_not_need_is_never_added_by_a_check() -> None:
    for verdict in VERDICTS:
        for fiber in (False, True):
            for poe in (False, True):
                whole = kind_of(verdict).cautions_for(poe=poe, fiber=fiber)
                first = _first(verdict, 3, poe=poe, fiber=fiber)
                assert set(first) <= set(whole), verdict


#: Words of a check that handles a cord, connector or module (common practice): each such
#: check must say it unplugs, so that its cautions come with it.
HANDLING = ("swap", "re-seat", "seated", "clean", "plugged", "permanent link", "each pair",
            "light source", "replace that transceiver", "patched", "terminations")  # fmt: skip


def test_every_check_that_handles_a_cord_or_module_says_so() -> None:
    for kind in KINDS:
        for check in (*kind.checks, *(kind.fiber_checks or ())):
            if any(word in check.text.lower() for word in HANDLING):
                assert Touch.UNPLUG in check.touches, (kind.verdict, check.text)


@pytest.mark.parametrize("verdict", VERDICTS)
def test_an_answer_carries_only_the_cautions_its_checks_need(verdict: Verdict) -> None:
    # A caution is for the work a check does (IEC 60825-1 for opening fibre ends, IEEE
    # 802.3af/at/bt power for unplugging a PoE port; the rest common practice): one that no
    # check of this answer calls for is noise that hides the ones that matter.
    kind = kind_of(verdict)
    for fiber in (False, True, None):
        for poe in (False, True):
            touched = frozenset().union(*(c.touches for c in kind.checks_for(fiber=fiber)))
            for caution in kind.cautions_for(poe=poe, fiber=fiber):
                if caution is not Caution.LOCAL_CODES:
                    assert touched & NEEDS[caution], (verdict, caution.name, fiber, poe)


def test_a_port_that_is_already_down_is_not_told_to_warn_its_users() -> None:
    # Nothing crosses a link that is down: "tell its users first" would be wrong there.
    for fiber in (False, True):
        assert Caution.SERVICE_BREAK not in kind_of("link_down").cautions_for(poe=True, fiber=fiber)


@pytest.mark.parametrize("fiber", [False, True])
def test_what_stops_harm_comes_first_a_one_way_link_out_of_forwarding(fiber: bool) -> None:
    # A one-way link can loop or black-hole traffic (IEEE 802.1D spanning tree assumes
    # links carry both ways): keeping it out of forwarding comes before finding the fault.
    (first, *rest) = kind_of("unidirectional").checks_for(fiber=fiber)
    assert first.stops_harm and "out of forwarding" in first.text
    assert not any(c.stops_harm for c in rest)


def test_a_slow_link_asks_what_the_far_end_supports_before_testing_the_cable() -> None:
    # Reading the far end's abilities disturbs nothing; testing the cable takes the link
    # down (common practice: look before you handle).
    texts = [c.text for c in kind_of("negotiation_degraded").checks]
    supports = next(i for i, t in enumerate(texts) if "far end supports" in t)
    cable = next(i for i, t in enumerate(texts) if "test the cable" in t)
    assert supports < cable


def test_every_caution_has_a_short_form_for_the_first_screen() -> None:
    assert set(SHORT) == set(Caution)
    assert all(len(text) <= 160 for text in SHORT.values())


#: A verdict module that forgot its phrases and its share of the prior.
HALF_DECLARED = """
from linktriage.engine.format.answers import Verdict
from linktriage.engine.verdicts.healthy import KIND as _HEALTHY
import dataclasses

KIND = dataclasses.replace(
    _HEALTHY, verdict=Verdict("half_declared"), listed=99, phrases=(), severity=1, demo=None
)
"""
REGISTRY_LOADS = "import linktriage.engine.verdicts"


def test_a_verdict_module_that_misses_a_part_is_refused_by_name(tmp_path: Path) -> None:
    root = package_copy(tmp_path, {})
    (root / "linktriage" / "engine" / "verdicts" / "half_declared.py").write_text(HALF_DECLARED)
    with pytest.raises(AssertionError, match="VerdictDeclarationError: the verdict "
                       "'half_declared' needs the phrases of the trade"):  # fmt: skip
        run_in_copy(root, REGISTRY_LOADS)


#: A verdict of a later format, added as one module: frames too long and bit errors at once.
TOY = '''"""toy_fault: a verdict added in one module (the recipe of DEVELOPERS.md)."""

from __future__ import annotations

from typing import TYPE_CHECKING

from linktriage.engine.format.answers import Verdict
from linktriage.engine.simulate.ports import (
    COPPER_1G, Ranges, Rng, at_least, fault_ber, frames, log_uniform,
)
from linktriage.engine.verdict_kit.declaration import (
    DemoPlant, Need, Shows, Touch, TreeVerdict, check,
)
from linktriage.engine.verdict_kit.readings import Items, PortGroup, bit_errors, count_and_share

if TYPE_CHECKING:
    import pandas as pd

TOY_FAULT = Verdict("toy_fault")


def _evidence(c: PortGroup) -> list[Items]:
    giants = count_and_share(
        c, "frames_too_long", "giants", "giant_ratio", "frames too long", "received frames",
        "RFC 3635 dot3StatsFrameTooLongs",
    )
    return [[g, e] for g, e in zip(giants, bit_errors(c), strict=True)]


def _signature(p: pd.DataFrame, rng: Rng, r: Ranges) -> None:
    n = len(p)
    p["giant_ratio"] = at_least(log_uniform(rng, 1e-4, 1e-2, n), r.min_events, frames(p, "rx"))
    p["rx_ber"] = fault_ber(p, rng, r)
    p["dot3"] = True
    p["jumbo_share"] = 0.0


KIND = TreeVerdict(
    verdict=TOY_FAULT,
    listed=20,
    title="toy fault",
    meaning="Frames too long and bit errors together.",
    checks=(check("Look at the toy."), check("Swap the toy's cord.", Touch.UNPLUG)),
    cautions=(),
    evidence=_evidence,
    demo=DemoPlant(
        "annex", "lark-annex-sw1", "port5", "a toy on the annex desk",
        {**COPPER_1G, "poe": 0.0, "giant_ratio": 0.01, "rx_ber": 1e-7, "rx_util": 0.2},
    ),
    severity=1,
    needs=(Need("frames too long beside bit errors", "a test's own rule",
                lambda s: s.giants & s.errors),),
    bit_errors=True,
    phrases=(("toy", 3),),
    signature=_signature,
    prior_share=0.10,
    shown_by=(Shows("giant_ratio", higher=True), Shows("ber_over_objective", higher=True)),
)
'''
#: In the copy: a model trained with the toy, and the bot asked about the toy's demo port.
SERVE_THE_TOY = """
import json, sys
from pathlib import Path
from linktriage.bot.label_parser import parse_label
from linktriage.bot.triage import Triage
from linktriage.engine.diagnosis.loaded_model import Model
from linktriage.engine.model.train import TrainingConfig, train
from linktriage.engine.simulate.ports import DEFAULT_START
from linktriage.engine.verdicts import VERDICTS
from linktriage.network.demo import DemoClock, DemoNetwork
from linktriage.render.blocks import message_for, thread_for
from linktriage.settings import Settings
from linktriage.store import Store
artefact = train(TrainingConfig(simulated_ports=6000))
clock = DemoClock(DEFAULT_START)
store = Store(f"sqlite:///{Path(sys.argv[1]) / 'store.sqlite'}")
triage = Triage(DemoNetwork(clock=clock), store, Model(artefact), Settings(), clock=clock,
                sleep=clock.sleep)
reply = triage.handle("lark-annex-sw1 port5", user="U1", channel="C1")
store.close()
print(json.dumps({"verdicts": VERDICTS, "classes": artefact.classes, "record": reply.record,
                  "message": message_for(reply), "thread": thread_for(reply),
                  "label": parse_label("it was the toy after all").verdict}))
"""


def test_a_verdict_added_as_one_module_is_served_end_to_end(tmp_path: Path) -> None:
    # Nothing of the package changes but the new module: the registry finds it, the prior
    # simulates it, a model trained on that prior answers it, the demo network plants it,
    # the bot answers it with its evidence and checks and asks what was found, and a thread
    # reply that names it is read as it.
    root = package_copy(tmp_path, {})
    (root / "linktriage" / "engine" / "verdicts" / "toy_fault.py").write_text(TOY)
    done = run_in_copy(root, SERVE_THE_TOY, str(tmp_path))
    seen = json.loads(done.stdout)
    assert seen["verdicts"][-1] == "toy_fault" and seen["verdicts"][:-1] == list(VERDICTS)
    assert "toy_fault" in seen["classes"]
    record = seen["record"]
    assert (record["verdict"], record["title"]) == ("toy_fault", "toy fault")
    assert record["evidence"][0]["feature"] == "frames_too_long"
    assert record["next_checks"] == ["Look at the toy.", "Swap the toy's cord."]
    assert "a toy on the annex desk" in json.dumps(seen["message"])
    drawn = json.dumps(seen["message"])
    assert '"What did you find?"' in drawn  # what was found is asked, as on every answer
    assert seen["label"] == "toy_fault"


def test_every_fault_names_the_tree_features_that_show_it_and_which_way() -> None:
    # What would change an answer is said in a reading of the verdict it leads to
    # (model/nearest.py): each fault must name at least one, each a feature of the tree.
    for kind in TREE:
        assert {r.feature for r in kind.shown_by} <= set(FEATURE_NAMES), kind.verdict
        assert bool(kind.shown_by) == (kind.severity is not None), kind.verdict


def test_a_port_down_says_since_when_and_that_it_flapped_first(model: Model) -> None:
    # SNAPSHOT-FORMAT 1.2: link_changes counts oper-status transitions (cumulative) and
    # last_change is ifLastChange as a time (RFC 2863). Up at 08:00 with 3 changes so far;
    # down at 08:05 after 15 more, the last at 08:04:10.
    t5 = "2026-03-02T08:05:00Z"
    table = polls(
        line(T0, {"ifHCInOctets": 10**9}, speed_bps=10**9, link_changes=3),
        line(t5, {"ifHCInOctets": 10**9}, oper_status="down", speed_bps=10**9,
             link_changes=18, last_change="2026-03-02T08:04:10Z"),
    )  # fmt: skip
    record = diagnose(table, model).record(0)
    assert record["verdict"] == "link_down"
    said = [e["said"] for e in record["evidence"]]
    assert said[0] == "the port is down, since 2026-03-02T08:04:10Z (its last change of state)"
    assert said[1] == "before that, the link went down or up 15 times in 5 min (flapping)"


def test_a_port_down_without_its_last_change_says_the_device_did_not_say(model: Model) -> None:
    table = polls(
        line(T0, {"ifHCInOctets": 10**9}, speed_bps=10**9),
        line("2026-03-02T08:05:00Z", {"ifHCInOctets": 10**9}, oper_status="down",
             speed_bps=10**9),
    )  # fmt: skip
    (only,) = diagnose(table, model).record(0)["evidence"]
    assert only["said"] == (
        "the port is down at the latest poll; the device does not say since when"
    )
