"""The console transport: the bot's commands at a prompt, threads emulated."""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

from linktriage.bot.triage import Triage
from linktriage.transports.console import Console


def test_a_conversation_asks_labels_and_lists(triage: Triage) -> None:
    console = Console(triage)
    out: list[str] = []
    console.run(
        iter(
            [
                "help",
                "lark-east-idf2 port14",
                "reply cable_fault, crushed patch cord behind the desk",
                "reply on my way",
                "suspects annex",
                "reply 2: mtu was 9000 on the archive server",
                "",
                "quit",
                "model",
            ]
        ),
        out.append,
    )
    text = "\n".join(out)
    assert "`suspects [SITE]`" in text
    assert "Receive errors at lark-east-idf2 port14, " in text
    assert "\ncable or connector fault (cable_fault), confidence" in text
    assert (
        "Recorded: console found a damaged patch cord or cable at lark-east-idf2 port14: "
        "crushed patch cord behind the desk. It bears out the answer (cable_fault)" in text
    )
    assert "not read as a label" in text
    assert "lark-annex-sw1 port3: MTU mismatch" in text  # in the list
    assert (
        "Recorded: console found MTU set differently at the two ends at lark-annex-sw1 port3"
        in text
    )
    assert "pruning:" not in text  # `model` came after quit: no card
    assert [(lb.finding, lb.verdict) for lb in triage.store.labels()] == [
        ("damaged_cord", "cable_fault"),
        ("mtu_set", "mtu_mismatch"),
    ]


def test_a_reply_before_any_answer_says_so(triage: Triage) -> None:
    assert (
        Console(triage).say("reply cable_fault")
        == "Nothing to reply to yet: ask about a port first."
    )


def test_errors_have_no_thread(triage: Triage) -> None:
    console = Console(triage)
    answer = console.say("lark-east-idf9 port1")
    assert answer is not None and "No device named" in answer
    assert console.thread is None


def test_a_leading_mention_of_the_bot_is_understood(triage: Triage) -> None:
    answer = Console(triage).say("@linktriage lark-east-idf2 port14")
    assert answer is not None
    assert "\nReceive errors at lark-east-idf2 port14, " in answer


def test_help_at_the_prompt_shows_the_commands_as_typed_there(triage: Triage) -> None:
    answer = Console(triage).say("help")
    assert answer is not None
    assert "- `DEVICE PORT`: diagnose one port now" in answer
    assert "- `suspects [SITE]`: the suspect links" in answer
    assert "In Slack, type them after `/triage` or a mention of the bot." in answer
    wrong = Console(triage).say("lark-core1")
    assert wrong is not None
    assert wrong.endswith(  # every command, as typed at the prompt
        "Try `DEVICE PORT`, `port-of NEIGHBOR`, `history DEVICE PORT [SINCE]`, "
        "`tree DEVICE PORT`, `suspects [SITE]`, `model`, or `help`."
    )


def test_reply_with_nothing_after_it_asks_for_what_was_found(triage: Triage) -> None:
    console = Console(triage)
    console.say("lark-east-idf2 port14")
    for typed in ("reply", "reply   ", "REPLY"):
        assert console.say(typed) == (
            "Say what you found after `reply`, e.g. `reply crushed patch cord`."
        )
    assert triage.store.labels() == []


def test_an_invisible_character_in_a_name_is_shown_where_it_sits(triage: Triage) -> None:
    # A zero-width space pasted in with the port name: the name looks right and is not.
    answer = Console(triage).say("lark-east-idf2 port\u200b14")
    assert answer is not None
    assert answer.startswith("'port<U+200B>14' is not a device or port name.")
    assert "\u200b" not in answer and "\\u200b" not in answer


def test_a_reply_lands_on_the_answer_it_follows_across_sessions(triage: Triage) -> None:
    # Issue 21: thread ids restarted in every session, so a reply in the second session
    # was stored on the first session's answer. One store, two consoles, one after another.
    first = Console(triage)
    first.say("lark-east-idf2 port14")
    second = Console(triage)
    second.say("lark-core1 up5")
    second.say("reply congestion, the annex link is full")
    (label,) = triage.store.labels()
    assert (label.device, label.port, label.verdict) == ("lark-core1", "up5", "congestion")


def test_the_console_draws_no_picture_for_an_answer_as_for_a_history(tmp_path: Path) -> None:
    # The console shows text: an answer's chart, like a history's and a tree's picture, is
    # left to Slack's thread; `history --plot` writes one to a file. So no answer or
    # history at the prompt costs a drawing: matplotlib is never loaded.
    code = (
        "import sys\n"
        "from linktriage.cli import main\n"
        "try:\n"
        "    main(['chat'])\n"
        "except SystemExit:\n"
        "    pass\n"
        "print('matplotlib' in sys.modules)\n"
    )
    typed = "lark-east-idf2 port14\nhistory lark-east-idf2 port14 1h\ntree idf2 port14\nquit\n"
    env = {**os.environ, "LINKTRIAGE_HOME": str(tmp_path)}
    done = subprocess.run([sys.executable, "-c", code], input=typed, capture_output=True,
                          text=True, check=True, env=env)  # fmt: skip
    *said, loaded = done.stdout.rstrip().splitlines()
    assert "\ncable or connector fault (cable_fault), confidence" in "\n".join(said)
    assert "png" not in "\n".join(said).lower() and "picture" not in "\n".join(said).lower()
    assert loaded == "False"
