"""The diagnosis service end to end: records in the shape SNAPSHOT-FORMAT promises."""

from __future__ import annotations

import io
import json
from pathlib import Path

import pytest

from linktriage.demo_network import PLANTED, demo_polls
from linktriage.diagnosis import Model, diagnose
from linktriage.render.jsonl import dumps, write_lines
from linktriage.snapshot import read_snapshot_file
from linktriage.verdicts import Verdict

QUESTION_FIELDS = {"question", "answer", "feature", "value", "threshold"}
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
}  # fmt: skip  (the minimum of SNAPSHOT-FORMAT's `diagnose --json`)


@pytest.fixture(scope="module")
def demo(model: Model):  # type: ignore[no-untyped-def]
    return diagnose(demo_polls(), model)


def test_every_planted_fault_of_the_demo_network_is_found(demo) -> None:  # type: ignore[no-untyped-def]
    for port in PLANTED:
        row = demo.index_of(port.device, port.port)
        assert row is not None
        assert demo.verdict[row] is port.planted, (port.device, port.port)


def test_records_carry_the_formats_fields(demo) -> None:  # type: ignore[no-untyped-def]
    for record in demo.records():
        assert set(record) >= RECORD_FIELDS
        assert record["verdict"] in {v.value for v in Verdict}
        assert 0.0 <= record["confidence"] <= 1.0
        assert record["model_version"] == demo.model.version
        for q in record["questions"]:
            assert set(q) >= QUESTION_FIELDS
            assert isinstance(q["answer"], bool)


def test_tree_verdicts_show_their_path_and_guard_verdicts_their_reason(demo) -> None:  # type: ignore[no-untyped-def]
    for record in demo.records():
        assert record["questions"], record["verdict"]
        if record["verdict"] == "insufficient_traffic":
            (q,) = record["questions"]
            assert q["feature"] == "frames" and q["answer"] is False
            assert q["value"] < q["threshold"]


def test_a_cable_fault_on_a_poe_port_carries_the_poe_caution(demo) -> None:  # type: ignore[no-untyped-def]
    record = demo.record(demo.index_of("lark-east-idf2", "port14"))
    assert record["verdict"] == "cable_fault"
    assert any("Power over Ethernet" in c for c in record["cautions"])
    assert record["bit_errors"]["phy"] == "1000BASE-T"
    assert record["bit_errors"]["exceeds"] is True


def test_a_degraded_optic_warns_about_the_light(demo) -> None:  # type: ignore[no-untyped-def]
    record = demo.record(demo.index_of("lark-east-idf1", "up1"))
    assert record["verdict"] == "optic_degraded"
    assert any("Never look into a fiber" in c for c in record["cautions"])


def test_the_fast_json_writer_writes_exactly_the_records(
    demo, snapshots: Path, model: Model
) -> None:  # type: ignore[no-untyped-def]
    batches = [demo]
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
    from linktriage.polls import PollTable

    assert len(diagnose(PollTable.empty(), model)) == 0
