"""The tree's questions, as every diagnosis record words them: one per feature, the values
beside them as they read, and the change of one value that would move a verdict.

Kept in one module so the wording can be read and reviewed as text. Each verdict's title,
checks, cautions and evidence live in its own module under :mod:`linktriage.engine.verdicts`;
what the bot and the command line say around a diagnosis is in :mod:`linktriage.render.words`.
"""

from __future__ import annotations

from collections.abc import Callable

from linktriage.engine.format.counters import (
    FRAME_OVERHEAD_OCTETS,
    MIN_FRAME_OCTETS,
    SLOT_TIME_BITS,
)
from linktriage.engine.measure.measures import MIN_COLLISIONS, MIN_EVENTS
from linktriage.engine.measure.numbers import format_ratio, ratio_scale, sig, times

#: For each feature: the question asked when the tree splits on it once (``{t}`` is the
#: threshold as it reads), answered "yes" when the measured value is above the threshold;
#: and the question when the path bounds it on both sides (``{lo}`` < value <= ``{hi}``).
QUESTIONS: dict[str, tuple[str, str]] = {
    "ber_over_objective": (
        "Bit error ratio, at the low end of its 99% range, over {t} the PHY's objective?",
        "Bit error ratio, at the low end of its 99% range, between {lo} and {hi} the PHY's "
        "objective?",
    ),
    "runts_vs_collisions": (
        f"Runts (frames under {MIN_FRAME_OCTETS} octets) more than {{t}} the share of receive "
        "errors that collisions leave as runts (the slot time over the frame length)?",
        f"Runts (frames under {MIN_FRAME_OCTETS} octets) between {{lo}} and {{hi}} the share of "
        "receive errors that collisions leave as runts (the slot time over the frame length)?",
    ),
    "late_collision_ratio": (
        f"Late collisions (after the first {SLOT_TIME_BITS} bit times) on more than {{t}} "
        "sent frames?",
        f"Late collisions (after the first {SLOT_TIME_BITS} bit times) on between {{lo}} and "
        "{hi} sent frames?",
    ),
    "collision_ratio": (
        "Collisions on more than {t} sent frames?",
        "Collisions on between {lo} and {hi} sent frames?",
    ),
    "half_duplex": ("Running half duplex?", "Running half duplex?"),
    "speed_ratio": (
        "Running at more than {t} of the port's top speed?",
        "Running at between {lo} and {hi} of the port's top speed?",
    ),
    "giant_ratio": (
        "More than {t} received frames too long for this port "
        f"(its MTU plus {FRAME_OVERHEAD_OCTETS} octets of header and FCS)?",
        "Between {lo} and {hi} received frames too long for this port "
        f"(its MTU plus {FRAME_OVERHEAD_OCTETS} octets of header and FCS)?",
    ),
    "light_margin_db": (
        "Received light more than {t} above the module's low warning (or, with no warning, "
        "2 dB over its low alarm or the receiver's sensitivity)?",
        "Received light between {lo} and {hi} above the module's low warning (or, with no "
        "warning, 2 dB over its low alarm or the receiver's sensitivity)?",
    ),
    "tx_margin_db": (
        "Transmitted light more than {t} above the module's low alarm?",
        "Transmitted light between {lo} and {hi} above the module's low alarm?",
    ),
    "flaps_per_hour": (
        "Link went down and up more than {t} times an hour?",
        "Link went down and up between {lo} and {hi} times an hour?",
    ),
    "quiet_fps": (
        "Quieter direction carries more than {t}?",
        "Quieter direction carries between {lo} and {hi}?",
    ),
    "discard_ratio": (
        "More than {t} frames discarded, in the direction with the most discards?",
        "Between {lo} and {hi} frames discarded, in the direction with the most discards?",
    ),
    "discard_utilisation": (
        "The direction with the most discards running above {t} of line rate?",
        "The direction with the most discards running between {lo} and {hi} of line rate?",
    ),
    "pre_fec_over_high": (
        "Pre-FEC bit error ratio over {t} the level its code calls high?",
        "Pre-FEC bit error ratio between {lo} and {hi} the level its code calls high?",
    ),
    "fec_lost_ratio": (
        "Codewords FEC could not correct, more than {t} of those carried?",
        "Codewords FEC could not correct, between {lo} and {hi} of those carried?",
    ),
    "overload_margin_db": (
        "Received light more than {t} above the receiver's high threshold?",
        "Received light between {lo} and {hi} above the receiver's high threshold?",
    ),
    "pause_share": (
        "Received pause frames able to hold the transmitter off more than {t} of the time?",
        "Received pause frames able to hold the transmitter off between {lo} and {hi} of the time?",
    ),
    "broadcast_fps": (
        "Broadcasts received at more than {t}?",
        "Broadcasts received at between {lo} and {hi}?",
    ),
    "broadcast_share": (
        "Broadcasts more than {t} of the frames received?",
        "Broadcasts between {lo} and {hi} of the frames received?",
    ),
}
#: A split this low on a per-frame ratio only asks whether the events were counted at all
#: (a ratio of fewer events than make evidence reads as none): 1e-9 per frame is ten events
#: among 10^10 frames, more than most ports carry in a window.
ANY_BELOW = -9.0
#: The question such a split asks, per feature.
ANY_QUESTIONS: dict[str, str] = {
    "late_collision_ratio": (
        f"Late collisions (after the first {SLOT_TIME_BITS} bit times) counted, "
        f"{MIN_COLLISIONS} or more?"
    ),
    "collision_ratio": f"Collisions counted, {MIN_COLLISIONS} or more?",
    "giant_ratio": (
        "Received frames too long for this port (its MTU plus "
        f"{FRAME_OVERHEAD_OCTETS} octets of header and FCS) counted, {MIN_EVENTS} or more?"
    ),
    "discard_ratio": (
        f"Frames discarded, {MIN_EVENTS} or more, in the direction with the most discards?"
    ),
}
#: For each feature, the change that would give another verdict, as it reads after "with":
#: ``{dir}`` is "above" or "below" and ``{t}`` the tree's threshold as it reads.
CHANGES: dict[str, str] = {
    "ber_over_objective": (
        "the bit error ratio, at the low end of its 99% range, {dir} {t} the PHY's objective"
    ),
    "runts_vs_collisions": (
        "runts {dir} {t} the share of receive errors that collisions leave as runts"
    ),
    "late_collision_ratio": "late collisions {dir} {t} sent frames",
    "collision_ratio": "collisions {dir} {t} sent frames",
    "speed_ratio": "the port running {dir} {t} of its top speed",
    "giant_ratio": "received frames too long for this port {dir} {t}",
    "light_margin_db": "received light {dir} {t} over the module's low warning",
    "tx_margin_db": "transmitted light {dir} {t} over the module's low alarm",
    "flaps_per_hour": "the link going down and up {dir} {t} times an hour",
    "quiet_fps": "the quieter direction carrying {dir} {t}",
    "discard_ratio": "discards {dir} {t} frames, in the direction with the most",
    "discard_utilisation": "the direction with the most discards running {dir} {t} of line rate",
    "pre_fec_over_high": "the pre-FEC bit error ratio {dir} {t} its code's high level",
    "fec_lost_ratio": "uncorrectable codewords {dir} {t} of those carried",
    "overload_margin_db": "received light {dir} {t} over the receiver's high threshold",
    "pause_share": "pause frames able to hold the transmitter off {dir} {t} of the time",
    "broadcast_fps": "broadcasts received {dir} {t}",
    "broadcast_share": "broadcasts {dir} {t} of the frames received",
}
#: Changes that read as a state rather than a threshold, (above, below): a flag, and a
#: per-frame ratio split below ANY_BELOW (which only asks whether events were counted).
STATE_CHANGES: dict[str, tuple[str, str]] = {
    "half_duplex": ("the port running half duplex", "the port running full duplex"),
    "late_collision_ratio": (
        f"late collisions counted, {MIN_COLLISIONS} or more",
        f"fewer than {MIN_COLLISIONS} late collisions counted",
    ),
    "collision_ratio": (
        f"collisions counted, {MIN_COLLISIONS} or more",
        f"fewer than {MIN_COLLISIONS} collisions counted",
    ),
    "giant_ratio": (
        f"received frames too long for this port counted, {MIN_EVENTS} or more",
        f"fewer than {MIN_EVENTS} received frames too long for this port counted",
    ),
    "discard_ratio": (
        f"discards counted, {MIN_EVENTS} or more, in the direction with the most",
        f"fewer than {MIN_EVENTS} discards counted in either direction",
    ),
}
NOT_REPORTED = "not reported, so no evidence of it"
NONE_COUNTED = "none"


#: Feature values at or below these read as "nothing counted" (see
#: linktriage.engine.model.features).
_FLOOR = {"times": -4.0, "log_ratio": -13.0, "log_fps": -3.0}


def _reader(kind: str, threshold: float | None) -> Callable[[float], str]:
    if kind == "log_ratio":
        if threshold is None:  # each value on a scale of its own
            return lambda v: format_ratio(10.0**v, ratio_scale(10.0**v))
        scale = ratio_scale(10.0**threshold)
        return lambda v: format_ratio(10.0**v, scale)
    if kind == "times":
        return lambda v: times(10.0**v)
    if kind == "multiple":
        return times
    if kind == "log_fps":
        return lambda v: f"{sig(10.0**v)} frames/s"
    if kind == "share":
        return lambda v: f"{sig(v * 100)}%"
    if kind == "flag":
        return lambda v: "half duplex" if v > 0.5 else "full duplex"
    if kind == "db":
        return lambda v: f"{v:.1f} dB"
    return sig


def value_reader(kind: str, threshold: float | None) -> Callable[[float], str]:
    """How values read beside a question of this kind and threshold (NaN excluded); with
    no threshold, per-frame ratios read on a scale of their own."""
    read = _reader(kind, threshold)
    floor = _FLOOR.get(kind)
    if floor is None:
        return read
    return lambda v: NONE_COUNTED if v <= floor else read(v)


def format_threshold(kind: str, threshold: float) -> str:
    if kind == "log_ratio":
        return format_ratio(10.0**threshold, ratio_scale(10.0**threshold))
    if kind == "times":
        return times(10.0**threshold)
    if kind == "multiple":
        return times(threshold)
    if kind == "log_fps":
        return f"{sig(10.0**threshold)} frames/s"
    if kind == "share":
        return f"{sig(threshold * 100)}%"
    if kind == "db":
        return f"{threshold:.1f} dB"
    return sig(threshold)


def change_said(
    feature: str, kind: str, threshold: float, above: bool, title: str
) -> Callable[[float], str]:
    """How the nearest other verdict reads for a port whose value is ``v``: "would be
    healthy with fewer than 20 received frames too long for this port counted; now 1.2 in
    100,000". Worked out once per change; only the value read differs from port to port."""
    states = STATE_CHANGES.get(feature)
    if states is not None and (kind == "flag" or threshold < ANY_BELOW):
        change, reads = states[0 if above else 1], value_reader(kind, None)
    else:
        direction = "above" if above else "below"
        t = format_threshold(kind, threshold)
        change, reads = CHANGES[feature].format(dir=direction, t=t), value_reader(kind, threshold)
    head = f"would be {title} with {change}; now "
    return lambda v: head + reads(v)


def yes_no(answer: bool) -> str:
    return "yes" if answer else "no"
