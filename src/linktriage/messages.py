"""Words shown to people: the tree's questions, how measured values read, and report text.

Kept in one module so the wording can be read and reviewed as text. Verdict titles, checks
and cautions live beside the verdict ids in :mod:`linktriage.verdicts`.
"""

from __future__ import annotations

import math
from collections.abc import Callable

from linktriage.counters import FRAME_OVERHEAD_OCTETS, MIN_FRAME_OCTETS, SLOT_TIME_BITS

#: For each feature: the question asked when the tree splits on it (``{t}`` is the
#: threshold as it reads), answered "yes" when the measured value is above the threshold,
#: and the noun used when a split asks only whether the device reports it at all.
QUESTIONS: dict[str, tuple[str, str]] = {
    "rx_crc_ratio": ("More than {t} received frames fail the FCS check?", "FCS error counts"),
    "rx_symbol_ratio": ("Symbol errors on more than {t} received frames?", "symbol error counts"),
    "rx_error_ratio": (
        "More than {t} received frames counted as errors (ifInErrors)?",
        "receive error counts",
    ),
    "runt_ratio": (
        f"More than {{t}} received frames are runts, shorter than {MIN_FRAME_OCTETS} octets?",
        "runt counts (RMON)",
    ),
    "giant_ratio": (
        "More than {t} received frames too long for this port "
        f"(its MTU plus {FRAME_OVERHEAD_OCTETS} octets of header and FCS)?",
        "frame-too-long counts",
    ),
    "late_collision_ratio": (
        f"Late collisions (after the first {SLOT_TIME_BITS} bit times) on more than {{t}} "
        "sent frames?",
        "late collisions",
    ),
    "collision_ratio": ("Collisions on more than {t} sent frames?", "collision counts"),
    "in_discard_ratio": (
        "More than {t} received frames discarded without an error?",
        "inbound discard counts",
    ),
    "out_discard_ratio": ("More than {t} frames to send discarded?", "outbound discard counts"),
    "rx_utilisation": ("Inbound load above {t} of line rate?", "inbound octet counts"),
    "tx_utilisation": ("Outbound load above {t} of line rate?", "outbound octet counts"),
    "traffic_balance": (
        "Quieter direction carries more than {t} of the busier direction's frames?",
        "frame counts in both directions",
    ),
    "link_changes_per_hour": (
        "Link went down or up more than {t} times an hour?",
        "link change counts",
    ),
    "speed_ratio": ("Running at more than {t} of the port's top speed?", "speed or top speed"),
    "half_duplex": ("Running half duplex?", "duplex state"),
    "rx_power_margin_db": (
        "Received light more than {t} above the module's low alarm?",
        "transceiver readings",
    ),
}
MISSING_QUESTION = "Device does not report {noun}?"
NOT_REPORTED = "not reported"
UNREPORTED_ANSWER = "not reported; the tree takes it as {answer}"


def sig(x: float, digits: int = 2) -> str:
    """A number to ``digits`` significant figures, grouped, never in exponent notation."""
    if x == 0 or not math.isfinite(x):
        return "0" if x == 0 else str(x)
    decimals = digits - 1 - math.floor(math.log10(abs(x)))
    if decimals <= 0:
        return f"{round(x, decimals):,.0f}"
    return f"{x:,.{decimals}f}".rstrip("0").rstrip(".")


def ratio_scale(threshold: float) -> int:
    """The power of ten a per-frame ratio reads against: 1e-5 reads "1 in 100,000"."""
    if not 0 < threshold < math.inf:
        return 100
    return int(10 ** max(2, math.ceil(-math.log10(threshold) - 1e-9)))


def format_ratio(value: float, scale: int) -> str:
    """A per-frame ratio as "4.1 in 100,000", or as a percentage once it is large."""
    per = value * scale
    if per >= 1000:
        return f"{sig(value * 100)}% of frames"
    return f"{sig(per)} in {scale:,}"


def value_reader(kind: str, threshold: float) -> Callable[[float], str]:
    """How values read beside a question of this kind and threshold (NaN excluded)."""
    if kind == "ratio":
        scale = ratio_scale(threshold)
        return lambda v: format_ratio(v, scale)
    if kind == "share":
        return lambda v: f"{sig(v * 100)}%"
    if kind == "flag":
        return lambda v: "half duplex" if v > 0.5 else "full duplex"
    if kind == "db":
        return lambda v: f"{v:.1f} dB"
    return sig


def format_value(kind: str, value: float, threshold: float) -> str:
    """A measured value as it reads beside a question whose threshold is ``threshold``."""
    if math.isnan(value):
        return NOT_REPORTED
    return value_reader(kind, threshold)(value)


def format_threshold(kind: str, threshold: float) -> str:
    if kind == "ratio":
        return format_ratio(threshold, ratio_scale(threshold))
    if kind == "share":
        return f"{sig(threshold * 100)}%"
    if kind == "db":
        return f"{threshold:.1f} dB"
    return sig(threshold)


def yes_no(answer: bool) -> str:
    return "yes" if answer else "no"


# --- guard questions
GUARD_UP = "Is the port up?"
GUARD_POLLS = "Two or more usable polls in the window?"
GUARD_TRAFFIC = "Enough traffic to tell an error ratio of {t} from zero?"


def traffic_said(frames: float, errors: float, window_s: float, needed: float) -> str:
    return (
        f"no: {sig(frames, 3)} frames and {sig(errors, 3)} errors in {sig(window_s, 3)} s; "
        f"a clean window needs about {sig(needed, 2)} frames"
    )


def ber_line(phy: str, estimate: float, objective: float) -> str:
    """How the bit error ratio compares with the PHY's objective."""
    if estimate <= 0:
        return f"No bit errors seen; the {phy} objective is {objective:.0e}."
    verdict = "over" if estimate > objective else "within"
    return (
        f"Estimated bit error ratio {estimate:.1e}, {verdict} the {phy} objective "
        f"of {objective:.0e}."
    )


# --- chat
def help_lines(command: str) -> list[str]:
    """What the bot's help says, one line each."""
    return [
        f"`{command} DEVICE PORT`: diagnose one port now (a unique part of the device name "
        "will do).",
        f"`{command} suspects [SITE]`: the suspect links, worst first.",
        f"`{command} model`: the model's card.",
        "Reply in the thread of an answer with what you found, e.g. "
        "`cable_fault, crushed patch cord behind the desk`, or `confirmed`; in a digest's "
        "thread start with the link's number: `3: duplex forced on the printer`.",
    ]


LABEL_PROMPT = "Found it? Reply in this thread with what it was, or use the buttons."
DIGEST_PROMPT = (
    "Reply in this thread with a link's number and what you found: `3: cable_fault, crushed cord`."
)
LABEL_NOT_ALLOWED = "Labels from this channel or person are not taken here."
LABEL_WHICH = "Which was it: {options}? Reply with one of them."
LABEL_WHICH_LINK = (
    "Say which link first: its number in the list (`3: cable_fault ...`) or its name "
    "(`DEVICE PORT cable_fault ...`)."
)
LABEL_NOT_A_FAULT = (
    "The answer was `{verdict}`, which is not a fault or `healthy`; say what you found, "
    "e.g. `cable_fault, crushed patch cord`."
)
LABEL_STORE_FAILED = "Could not record that label ({reason}). Please try again."
LABEL_GONE = "That answer is no longer in the store."


def label_recorded(who: str, verdict: str, model_verdict: str, where: str, note: str) -> str:
    """The thread's acknowledgement of a stored label (``who`` as the transport names people)."""
    agreed = "confirms" if verdict == model_verdict else f"corrects {model_verdict} to"
    note_text = f": {note}" if note else ""
    return (
        f"Recorded: {who} {agreed} {verdict} on {where}{note_text}. "
        "The next training run learns from it."
    )
