"""The diagnosis service end to end: records in the shape SNAPSHOT-FORMAT promises, each
verdict with the evidence it rests on."""

from __future__ import annotations

import io
import json
from pathlib import Path

import numpy as np
import pytest
from sklearn.tree import DecisionTreeClassifier

from linktriage.engine.diagnosis.batch import DiagnosisBatch
from linktriage.engine.diagnosis.loaded_model import Model
from linktriage.engine.diagnosis.pipeline import diagnose, diagnose_chunks
from linktriage.engine.format.snapshot import read_snapshot_file
from linktriage.engine.model.features import FEATURE_NAMES
from linktriage.engine.prior import simulate_prior
from linktriage.engine.verdicts import GUARD_VERDICTS, VERDICTS
from linktriage.network.demo import PLANTED
from linktriage.render.jsonl import dumps, write_lines

from helpers import artefact_of, grown, polls

QUESTION_FIELDS = {"question", "answer", "feature", "value", "threshold"}
EVIDENCE_FIELDS = {"feature", "value", "unit", "reference", "source", "said"}
RECORD_FIELDS = {
    "device",
    "port",
    "verdict",
    "confidence",
    "questions",
    "next_checks",
    "cautions",
    "model_version",
    "window_s",
    "evidence",
    "nearest_other",
}  # fmt: skip  (SNAPSHOT-FORMAT 1.1's `diagnose --json` minimum; far_end belongs to later work)

#: The readings an engineer checks for each verdict, at least one of each group present.
DEFINING: dict[str, list[set[str]]] = {
    "cable_fault": [{"bit_error_ratio", "link_changes"}],
    "duplex_mismatch": [{"late_collisions"}, {"collisions"}, {"runts"}, {"duplex"}],
    "negotiation_degraded": [{"speed", "duplex"}],
    "mtu_mismatch": [{"frames_too_long"}],
    "optic_degraded": [{"rx_power", "tx_power", "temperature"}],
    "unidirectional": [
        {"rx_frames", "tx_frames"},
        {"rx_frames_per_second", "tx_frames_per_second"},
    ],
    "congestion": [
        {"outbound_discards", "inbound_discards"},
        {"outbound_utilisation", "inbound_utilisation"},
    ],
    "healthy": [{"bit_error_ratio"}],
    "insufficient_traffic": [{"rx_frames"}],
}


@pytest.fixture(scope="module")
def simulated(model: Model) -> DiagnosisBatch:
    polls_, _ = simulate_prior(3000, np.random.default_rng(31))
    return diagnose(polls_, model)


def test_every_planted_fault_of_the_demo_network_is_found(demo_batch: DiagnosisBatch) -> None:
    for port in PLANTED:
        row = demo_batch.index_of(port.device, port.port)
        assert row is not None
        assert demo_batch.verdict[row] == port.planted, (port.device, port.port)


def test_records_carry_the_formats_fields(demo_batch: DiagnosisBatch) -> None:
    for record in demo_batch.records():
        assert set(record) >= RECORD_FIELDS
        assert record["verdict"] in VERDICTS
        # A guard's answer is a fact of the window and has no confidence.
        confidence = record["confidence"]
        assert (confidence is None) == (record["verdict"] in GUARD_VERDICTS)
        assert confidence is None or 0.0 <= confidence <= 1.0
        assert record["model_version"] == demo_batch.model.version
        for q in record["questions"]:
            assert set(q) >= QUESTION_FIELDS
            assert isinstance(q["answer"], bool)
        for e in record["evidence"]:
            assert set(e) >= EVIDENCE_FIELDS and e["said"] and e["source"]


def test_every_verdict_carries_its_defining_evidence(
    demo_batch: DiagnosisBatch, simulated: DiagnosisBatch
) -> None:
    seen = set()
    for batch in (demo_batch, simulated):
        for record in batch.records():
            features = {e["feature"] for e in record["evidence"]}
            for group in DEFINING.get(record["verdict"], []):
                assert features & group, (record["verdict"], features)
            seen.add(record["verdict"])
    assert seen >= set(DEFINING)


def test_tree_verdicts_show_their_path_and_guard_verdicts_their_reason(
    demo_batch: DiagnosisBatch,
) -> None:
    for record in demo_batch.records():
        assert record["questions"], record["verdict"]
        if record["verdict"] == "insufficient_traffic":
            (q,) = record["questions"]
            assert q["feature"] == "rx_frames" and q["answer"] is False
            assert q["value"] < q["threshold"]


def test_a_cable_fault_on_a_poe_port_carries_the_poe_caution(demo_batch: DiagnosisBatch) -> None:
    record = demo_batch.record(demo_batch.index_of("lark-east-idf2", "port14"))  # type: ignore[arg-type]
    assert record["verdict"] == "cable_fault"
    assert any("Power over Ethernet" in c for c in record["cautions"])
    assert record["bit_errors"] is not None
    assert record["bit_errors"]["phy"] == "1000BASE-T"
    assert record["bit_errors"]["exceeds"] is True


def test_a_degraded_optic_warns_about_the_light(demo_batch: DiagnosisBatch) -> None:
    record = demo_batch.record(demo_batch.index_of("lark-east-idf1", "up1"))  # type: ignore[arg-type]
    assert record["verdict"] == "optic_degraded"
    assert any("Never look into a fiber" in c for c in record["cautions"])


def test_the_demos_duplex_mismatch_rests_on_collision_evidence(
    demo_batch: DiagnosisBatch,
) -> None:
    record = demo_batch.record(demo_batch.index_of("lark-east-idf2", "port7"))  # type: ignore[arg-type]
    assert record["verdict"] == "duplex_mismatch"
    assert record["evidence"][0]["feature"] in ("late_collisions", "runts")
    asked = {q["feature"] for q in record["questions"]}
    assert asked & {
        "late_collision_ratio", "runts_vs_collisions", "collision_ratio", "half_duplex"
    }  # fmt: skip


def test_a_first_choice_the_physics_rules_out_is_named_with_the_rule(model: Model) -> None:
    # A tree that answers duplex_mismatch wherever errors are significant, asked about a
    # 10 Gb/s fiber port with FCS errors: full duplex only, so the next class stands.
    x = np.full((4, len(FEATURE_NAMES)), -4.0, np.float32)
    x[2:, FEATURE_NAMES.index("ber_over_objective")] = 3.0
    x[:, FEATURE_NAMES.index("quiet_fps")] = 5.0
    clf = DecisionTreeClassifier(random_state=0).fit(
        np.vstack([x, x[2:]]),
        [
            "healthy",
            "healthy",
            "duplex_mismatch",
            "duplex_mismatch",
            "cable_fault",
            "duplex_mismatch",
        ],
    )
    strict = Model(artefact_of(clf, list(FEATURE_NAMES)), source="a test tree")
    lines = grown(
        {"ifHCInOctets": 10**11, "ifHCInUcastPkts": 10**8, "ifHCOutUcastPkts": 10**8,
         "dot3StatsFCSErrors": 5_000},
        speed_bps=10**10, media="fiber", duplex="full",
    )  # fmt: skip
    record = diagnose(polls(*lines), strict).record(0)
    assert record["verdict"] == "cable_fault"
    assert record["ruled_out"] is not None
    assert record["ruled_out"]["verdict"] == "duplex_mismatch"
    assert "half duplex exists" in record["ruled_out"]["needs"]


def test_the_fast_json_writer_writes_exactly_the_records(
    demo_batch: DiagnosisBatch, simulated: DiagnosisBatch, snapshots: Path, model: Model
) -> None:
    batches = [demo_batch, simulated]
    for name in ("bad-lines.jsonl", "counter32-device.jsonl", "format-example.jsonl"):
        batches.append(diagnose(read_snapshot_file(snapshots / name).polls, model))
    for batch in batches:
        out = io.StringIO()
        write_lines(batch, range(len(batch)), out)
        expected = "".join(dumps(r) + "\n" for r in batch.records())
        assert out.getvalue() == expected
        for text in out.getvalue().splitlines():
            json.loads(text)


def test_an_empty_file_diagnoses_no_ports(model: Model) -> None:
    from linktriage.engine.format.poll_table import PollTable

    assert len(diagnose(PollTable.empty(), model)) == 0


@pytest.mark.parametrize("ports", [1, 7, 1000])
def test_diagnosing_a_chunk_of_ports_at_a_time_gives_the_same_answers_in_order(
    model: Model, ports: int
) -> None:
    root = Path(__file__).resolve().parent.parent / "fixtures" / "snapshots"
    table = read_snapshot_file(root / "demo-network.jsonl").polls
    table.neighbor_device[:] = None  # a file without neighbors (version 1 lines)
    table.neighbor_port[:] = None
    shuffled = table.take(np.random.default_rng(3).permutation(len(table)))  # lines in any order
    whole = list(diagnose(shuffled, model).records())
    chunks = list(diagnose_chunks(shuffled, model, ports=ports))
    # Every port of a device in one chunk (a loop is seen across the ports of a device), so
    # a chunk holds more than ``ports`` only where one device has more.
    largest = max(sum(1 for r in whole if r["device"] == d) for d in {r["device"] for r in whole})
    assert all(len(b) <= max(ports, largest) for b in chunks)
    assert len(chunks) >= -(-len(whole) // max(ports, largest))
    devices = [set(b.device) for b in chunks]
    assert all(not (a & b) for k, a in enumerate(devices) for b in devices[k + 1 :])
    chunked = [r for batch in chunks for r in batch.records()]
    key = {(r["device"], r["port"]): r for r in whole}
    assert len(chunked) == len(whole) and {(r["device"], r["port"]): r for r in chunked} == key


@pytest.mark.parametrize("ports", [1, 7, 1000])
def test_a_chunk_at_a_time_gives_each_port_its_whole_answer_far_end_included(
    model: Model, ports: int
) -> None:
    # With neighbors, both ends of a link share a chunk, so an answer never loses its far
    # end; a far end may come earlier than its own first line would place it.
    root = Path(__file__).resolve().parent.parent / "fixtures" / "snapshots"
    table = read_snapshot_file(root / "demo-network.jsonl").polls
    shuffled = table.take(np.random.default_rng(3).permutation(len(table)))
    whole = {(r["device"], r["port"]): r for r in diagnose(shuffled, model).records()}
    chunked = [r for b in diagnose_chunks(shuffled, model, ports=ports) for r in b.records()]
    assert len(chunked) == len(whole)
    assert {(r["device"], r["port"]): r for r in chunked} == whole
    assert sum("far_end" in r for r in chunked) == 10  # five demo links, both ends each


def test_a_poll_that_lost_its_etherlike_table_costs_only_itself(model: Model) -> None:
    # Three polls of the demo network; the middle one's walk timed out before the
    # EtherLike-MIB table (RFC 3635), so those counters are absent from it.
    from linktriage.engine.format.counters import COLUMNS
    from linktriage.engine.format.poll_table import PollTable
    from linktriage.engine.simulate.ports import DEFAULT_START
    from linktriage.network.demo import DemoNetwork

    network = DemoNetwork()
    middle = network.poll_all(DEFAULT_START - 300.0)
    middle.present[:, [c.name.startswith("dot3") for c in COLUMNS]] = False
    polls_ = PollTable.concat(
        [network.poll_all(DEFAULT_START - 600.0), middle, network.poll_all(DEFAULT_START)]
    )
    batch = diagnose(polls_, model)
    row = batch.index_of("lark-east-idf2", "port14")
    assert row is not None
    record = batch.record(row)
    assert record["verdict"] == "cable_fault"
    assert record["window_s"] == 600.0
    assert record["note"] == (
        "skipped a poll that lacks counters the latest reports (2026-03-02T07:55:00Z)"
    )


def test_a_member_down_while_its_siblings_carry_the_aggregate_is_named_there(
    model: Model,
) -> None:
    # SNAPSHOT-FORMAT 1.2 output: `aggregate` names a member down, silent or erroring while
    # its siblings carry the load, whatever the member's own verdict; IEEE 802.1AX members.
    ten = {"speed_bps": 10**10, "max_speed_bps": 10**10, "media": "fiber", "aggregate": "bundle2"}
    busy = {"ifHCInOctets": 10**11, "ifHCInUcastPkts": 10**8, "ifHCOutOctets": 10**11,
            "ifHCOutUcastPkts": 10**8, "ifInErrors": 0, "dot3StatsFCSErrors": 0}  # fmt: skip
    lines = [
        *grown(busy, port="te1", **ten),
        *grown(busy, port="te2", **ten),
        *grown(busy, port="te3", **{**ten, "oper_status": "down"}),
        *grown(busy, port="te9", **{**ten, "aggregate": None}),
    ]
    records = {r["port"]: r for r in diagnose(polls(*lines), model).records()}
    aggregate = records["te1"]["aggregate"]
    assert aggregate == records["te3"]["aggregate"]
    assert aggregate["name"] == "bundle2"
    assert [(m["port"], m["verdict"]) for m in aggregate["members"]] == [
        ("te1", "healthy"), ("te2", "healthy"), ("te3", "link_down"),
    ]  # fmt: skip
    assert aggregate["said"].startswith("te3 (link down): 2 of 3 members carry the load")
    assert "aggregate" not in records["te9"]
