"""insufficient_traffic: too few frames in the window to tell a healthy error rate from a
faulty one.

Zero errors in ``n`` frames bound the error ratio below about ``3/n`` with 95% confidence
(the rule of three), so a clean port is called healthy only once its received frames bound
the ratio at the PHY's resolution. The guard holds back only verdicts that rest on a rate:
where a state reading or significant errors allow a verdict, the port is judged however
few its frames; only where nothing is allowed and the frames are too few is this the answer.
"""

from __future__ import annotations

from linktriage.engine.format.answers import QuestionRecord, Verdict
from linktriage.engine.measure.numbers import format_ratio, ratio_scale, rounded, sig
from linktriage.engine.simulate.ports import COPPER_1G
from linktriage.engine.verdict_kit.declaration import (
    BoolArray,
    DemoPlant,
    GuardInputs,
    GuardVerdict,
    check,
    question,
)
from linktriage.engine.verdict_kit.readings import (
    Items,
    PortFacts,
    PortGroup,
    item,
    ratio_words,
    window_words,
)

INSUFFICIENT_TRAFFIC = Verdict("insufficient_traffic")


def _evidence(c: PortGroup) -> list[Items]:
    source = "rule of three (exact binomial bound at 95%)"
    out: list[Items] = []
    for frames, window, needed, resolution in zip(
        c["rx_frames"], c["window_s"], c["frames_needed"], c["resolution"], strict=True
    ):
        said = (
            f"{frames:,.0f} frames received in {window_words(window)}; a clean window needs "
            f"about {sig(needed)} to bound the error ratio at {ratio_words(resolution)}"
        )
        out.append([item("rx_frames", frames, "frames", needed, source, said)])
    return out


def _guard(g: GuardInputs) -> BoolArray:
    """Nothing the readings allow, and too few frames to call the port healthy."""
    return ~g.anything_allowed & ~g.enough_frames


def _question(facts: PortFacts, i: int) -> QuestionRecord:
    resolution = facts.column("resolution")[i]
    needed = facts.column("frames_needed")[i]
    frames = facts.column("rx_frames")[i]
    errors = facts.column("rx_errors")[i]
    text = (
        "Enough traffic to tell an error ratio of "
        f"{format_ratio(resolution, ratio_scale(resolution))} from zero?"
    )
    errors_text = "no" if errors != errors else sig(errors, 3)  # NaN: not reported
    said = (
        f"no: {sig(frames, 3)} frames received and {errors_text} errors in "
        f"{sig(facts.window_s[i], 3)} s; a clean window needs about {sig(needed, 2)} frames"
    )
    return question(text, False, "rx_frames", rounded(frames), needed, said)


KIND = GuardVerdict(
    verdict=INSUFFICIENT_TRAFFIC,
    listed=16,
    title="not enough traffic to judge",
    meaning="Too few frames in the window to tell a healthy error rate from a faulty one.",
    checks=(
        check("Check again in a few minutes (each poll lengthens the window) or at a busier time."),
        check("Or run a throughput test between two hosts across this link, then ask again."),
    ),
    cautions=(),
    evidence=_evidence,
    demo=DemoPlant(
        "central",
        "lark-west-idf1",
        "port22",
        "study room wall outlet, usually empty",
        {**COPPER_1G, "rx_util": 2e-7, "tx_util": 4e-7},
    ),
    precedence=1,
    guard=_guard,
    question=_question,
    not_judged="too quiet to judge",
    measured=True,
)
