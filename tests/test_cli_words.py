"""The command line's own words: counts said in the singular for one."""

from __future__ import annotations

import pytest

from linktriage.cli import words


@pytest.mark.parametrize(
    ("said", "expected"),
    [
        (words.diagnosed(1, 1, 1), "1 snapshot of 1 port diagnosed; 1 line skipped"),
        (words.diagnosed(3, 2, 0), "3 snapshots of 2 ports diagnosed; 0 lines skipped"),
        (words.wrote_snapshots(1, "sw1", 1), "wrote 1 snapshot of sw1 in 1 poll"),
        (words.wrote_rows(1, "x.csv"), "wrote 1 labelled row to x.csv"),
        (words.answers_in("sw1", 0.5, 1), "sw1: answers in 0.50 s with 1 port"),
        (words.devices_ok(1), "1 device ok"),
        (words.set_up_wrongly(1, 3), "1 of 3 devices is set up wrongly"),
        (words.inventory_state("inv.toml", 1), "inventory: inv.toml, 1 device"),
        (words.kept_version("abc", 1, current=True), "  * kept abc: 1 label"),
        (
            words.labels_summary(1, 1, 0, 0, 0, 0),
            "1 label: 1 counting, 0 replaced by their author's later one, 0 on 0 disputed "
            "answers, 0 teaching no verdict",
        ),
        (
            words.labels_summary(4, 2, 1, 1, 1, 1),
            "4 labels: 2 counting, 1 replaced by their author's later one, 1 on 1 disputed "
            "answer, 1 teaching no verdict",
        ),
        (
            words.device_setup("sw1", "annex", "snmp", "10.0.0.1", 1, "ok"),
            "sw1 (annex): snmp at 10.0.0.1, 1 port listed: ok",
        ),
        (
            words.poll_round_done(1, {"sw1": "no answer within 2 s"}),
            "poll round: 1 port poll stored; 1 device not read (sw1: no answer within 2 s)",
        ),
        (
            words.watching(5.0, "mon-fri", "07:30", "UTC", ["standard output"], 1),
            "watching the network: a poll round every 5 min, the digest mon-fri at 07:30 (UTC), "
            "each digest to standard output (1 digest kept from before goes first); Ctrl-C stops",
        ),
    ],
)
def test_counts_of_one_are_said_in_the_singular(said: str, expected: str) -> None:
    assert said == expected


def test_what_training_learnt_is_said_in_the_singular_for_one() -> None:
    said = words.learnt(1, 1, 1, 1, 0.9, "abc", 0.8, True)
    assert said == (
        "learnt from 1 label (1 older one left out) (1 answer held out: their labels "
        "disagree); on 1 held out the candidate scores 0.90, the current model abc 0.80: "
        "promoted"
    )
