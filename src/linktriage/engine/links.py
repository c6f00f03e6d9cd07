"""Both ends of a link: which ports face each other, and what the two views say together.

An engineer who suspects a link looks at both ends before walking anywhere, because each
end counts only what it receives (RFC 2863 and RFC 3635 counters are per receiving
interface): errors at one end only point at one direction's path; a duplex mismatch is
one end at half duplex and the other at full; a one-way link is confirmed by the far
end's transmit counter; the light a fiber direction loses is the far end's transmit power
minus the near end's received power.

**Pairing.** A port's ``neighbor`` (the far end as LLDP reports it, IEEE 802.1AB) names a
system and a port. It is matched to a port of the same input: the system name to a
device exactly, else ignoring case, else by its first DNS label (``lark-core1.example``
is ``lark-core1``) where that is one device only; the port name exactly, else ignoring
case. A far end whose own neighbor names a third port is not paired (one of the two
LLDP views is stale); a far end that names no neighbor is paired (LLDP may run on one
side only).
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from linktriage.engine.measure.measures import MIN_COLLISIONS, MIN_EVENTS
from linktriage.engine.measure.numbers import sig
from linktriage.engine.physics import ALIVE_FPS
from linktriage.engine.verdicts import FAULTS, GUIDES, SEVERITY, Verdict

#: The largest channel insertion loss a fiber PMD of each speed allows, so that a
#: direction is called lossy only where it is lossy for every PMD the port could run:
#: 1 Gb/s, 1000BASE-LX channel 4.5 dB (TIA FOTC's 1000BASE-LX page, reproducing IEEE 802.3
#: clause 38); 10 Gb/s, 10GBASE-LR channel 6.2 dB (IEEE 802.3 clause 52, from memory).
CHANNEL_LOSS_DB: dict[int, tuple[str, float]] = {
    1_000_000_000: ("1000BASE-LX", 4.5),
    10_000_000_000: ("10GBASE-LR", 6.2),
}
#: Why a fault one end sees need not show at the other (RFC 2863 and RFC 3635 counters
#: belong to the interface that counts them).
ONE_END_ONLY: dict[Verdict, str] = {
    Verdict.CONGESTION: "discards are counted where a queue overflows, on one side of the link",
    Verdict.NEGOTIATION_DEGRADED: "a port's speed is what its own negotiation settled on",
    Verdict.DUPLEX_MISMATCH: "a port's duplex is its own setting",
}
#: Verdicts of an end with no window to read two-ended signs from.
UNREAD = frozenset({Verdict.LINK_DOWN, Verdict.NO_DATA})


def _short(name: str) -> str:
    return name.split(".", 1)[0].casefold()


class PortMatcher:
    """Finds the port a neighbor names among known ports (the module docstring says how)."""

    def __init__(self, device: Sequence[str], port: Sequence[str]) -> None:
        self.rows = {(d, p): i for i, (d, p) in enumerate(zip(device, port, strict=True))}
        self.folded = {(d.casefold(), p.casefold()): i for (d, p), i in self.rows.items()}
        self.by_label: dict[str, set[str]] = {}
        for d in set(device):
            self.by_label.setdefault(_short(d), set()).add(d)

    def find(self, far: str, far_port: str) -> int:
        """The row of the port named, or -1."""
        exact = self.rows.get((far, far_port))
        if exact is not None:
            return exact
        found = self.folded.get((far.casefold(), far_port.casefold()))
        if found is not None:
            return found
        named = self.by_label.get(_short(far), set())
        if len(named) == 1:
            (only,) = named
            return self.folded.get((only.casefold(), far_port.casefold()), -1)
        return -1


def pair_ends(
    device: Sequence[str],
    port: Sequence[str],
    neighbor_device: Sequence[str | None],
    neighbor_port: Sequence[str | None],
) -> npt.NDArray[np.intp]:
    """For each row, the row of the port at the other end of its link, or -1."""
    far_end = np.full(len(device), -1, np.intp)
    if all(d is None for d in neighbor_device):
        return far_end  # version 1 lines: no link to look for
    matcher = PortMatcher(device, port)
    named_far = np.full(len(device), -1, np.intp)
    for i, (far, far_port) in enumerate(zip(neighbor_device, neighbor_port, strict=True)):
        if far is not None and far_port is not None:
            named_far[i] = matcher.find(far, far_port)
    for i, j in enumerate(named_far.tolist()):
        if j < 0 or j == i:
            continue
        back = int(named_far[j])
        if back == i or (back < 0 and neighbor_device[j] is None):
            far_end[i], far_end[j] = j, i
    return far_end


@dataclass(frozen=True, slots=True)
class LinkView:
    """What both ends say together: the link's verdict, why, and the checks with the end
    each applies to."""

    verdict: Verdict
    said: tuple[str, ...]
    checks: tuple[str, ...]
    agree: bool  # whether both ends gave the link's verdict on their own


Column = Callable[[str], Sequence[float]]


def _known(x: float) -> bool:
    return x == x  # not NaN


@dataclass(frozen=True, slots=True)
class _Ends:
    """The two rows of a link and what is read at each."""

    a: int
    b: int
    verdict: Sequence[Verdict]
    column: Column
    name: Callable[[int], str]

    def both(self) -> tuple[tuple[int, int], tuple[int, int]]:
        return (self.a, self.b), (self.b, self.a)

    def view(self, link: Verdict, said: list[str], checks: list[str]) -> LinkView:
        agree = self.verdict[self.a] == link and self.verdict[self.b] == link
        return LinkView(link, tuple(said), tuple(checks), agree)


def judge_link(
    a: int, b: int, verdict: Sequence[Verdict], column: Column, name: Callable[[int], str]
) -> LinkView:
    """The link between rows ``a`` and ``b`` seen from both ends, from ``a``'s side: the
    first of these that the readings show, in this order, else the worse end's verdict."""
    ends = _Ends(a, b, verdict, column, name)
    losses, lossy = _light_lost(ends)
    if {verdict[a], verdict[b]} & UNREAD:
        return _worse_end(ends, losses)  # an end with nothing to measure shows no sign
    for judged in (
        _duplex_mismatch(ends),
        _one_way(ends),
        _lossy_strand(ends, losses, lossy),
        _errors_one_way(ends, losses),
    ):
        if judged is not None:
            return judged
    return _worse_end(ends, losses)


def _duplex_mismatch(ends: _Ends) -> LinkView | None:
    """One end at half duplex, the other at full (IEEE 802.3 clause 4: the half end defers
    and collides late; the full end receives frames cut short by those collisions, as FCS
    errors and runts)."""
    half = ends.column("half_duplex_seen")
    for h, f in ends.both():
        if half[h] == 1.0 and half[f] == 0.0:
            half_end, full_end = ends.name(h), ends.name(f)
            late = _counted(ends.column("late_collisions")[h], "late collision", MIN_COLLISIONS)
            seen = [
                _counted(ends.column("rx_errors")[f], "errored frame", 1),
                _counted(ends.column("runts")[f], "runt", 1),
            ]
            said = [
                f"{half_end} runs half duplex" + _listed([late]),
                f"{full_end} runs full duplex" + _listed(seen),
            ]
            checks = [
                f"at {half_end}: it is the auto-negotiating end left at half duplex; set both "
                "ends alike (auto-negotiation on both, or the same fixed speed and full duplex)",
                f"at {full_end}: if it is fixed at full duplex, return it to auto-negotiation",
            ]
            return ends.view(Verdict.DUPLEX_MISMATCH, said, checks)
    return None


def _one_way(ends: _Ends) -> LinkView | None:
    """One direction silent while the other end sends: a one-way link, confirmed by the
    far end's transmit counter."""
    rx_fps, tx_fps = ends.column("rx_fps"), ends.column("tx_fps")
    for near, far in ends.both():
        sent, got = tx_fps[far], rx_fps[near]
        if sent >= ALIVE_FPS and _known(got) and got * 1000 < sent:
            near_end, far_end = ends.name(near), ends.name(far)
            said = [
                f"{far_end} sends {sig(sent)} frames/s, {near_end} receives {sig(got)}: the "
                f"{far_end} \u2192 {near_end} direction is broken"
            ]
            checks = [
                f"at {far_end}: its transmit side (the module or port sending toward {near_end})",
                f"the {far_end} \u2192 {near_end} strand or pair of the cable, and its patch cords",
                f"at {near_end}: its receive connector and module",
            ]
            return ends.view(Verdict.UNIDIRECTIONAL, said, checks)
    return None


def _light_lost(ends: _Ends) -> tuple[list[str], list[tuple[int, int]]]:
    """The light each direction loses (far end's transmit power minus near end's received
    power), in words, a lossy direction first, and the directions that lose more than any
    PMD of the speed allows."""
    rx_dbm, tx_dbm = ends.column("rx_dbm"), ends.column("tx_dbm")
    speed = ends.column("speed_bps")[ends.a]
    allowed = CHANNEL_LOSS_DB.get(int(speed)) if _known(speed) else None
    said: list[str] = []
    lossy: list[tuple[int, int]] = []
    for tx, rx in ends.both():
        if not (_known(tx_dbm[tx]) and _known(rx_dbm[rx])):
            continue
        loss = tx_dbm[tx] - rx_dbm[rx]
        line = f"{ends.name(tx)} \u2192 {ends.name(rx)} loses {sig(loss)} dB"
        if allowed is not None:
            pmd, most = allowed
            over = loss > most
            line += f" ({'over' if over else 'within'} the {sig(most)} dB a {pmd} channel allows)"
            if over:
                lossy.append((tx, rx))
                said.insert(0, line)
                continue
        said.append(line)
    return said, lossy


def _lossy_strand(ends: _Ends, losses: list[str], lossy: list[tuple[int, int]]) -> LinkView | None:
    """A fiber direction losing more light than its channel may: that strand's connectors
    and cords (a dirty or damaged end face, a tight bend)."""
    if not lossy:
        return None
    tx, rx = lossy[0]
    sender, receiver = ends.name(tx), ends.name(rx)
    other = "loses too much as well" if len(lossy) == 2 else "is within its allowance"
    checks = [
        f"the {sender} \u2192 {receiver} strand: clean and inspect its connectors with a fiber "
        f"scope ({sender}'s transmit end, {receiver}'s receive end) and its patch cords",
        f"at {receiver}: compare with the other strand, which {other}",
    ]
    return ends.view(Verdict.OPTIC_DEGRADED, losses, checks)


def _errors_one_way(ends: _Ends, losses: list[str]) -> LinkView | None:
    """Errored frames received at one end only (each end counts only what it receives):
    that direction's path; at both ends, the run they share."""
    rx_errors = ends.column("rx_errors")
    errs = [
        i
        for i in (ends.a, ends.b)
        if rx_errors[i] >= MIN_EVENTS and ends.verdict[i] is Verdict.CABLE_FAULT
    ]
    if len(errs) == 2:
        first, second = ends.name(ends.a), ends.name(ends.b)
        said = [
            f"both ends receive errored frames: {first} {sig(rx_errors[ends.a])}, "
            f"{second} {sig(rx_errors[ends.b])}",
            *losses,
        ]
        checks = [
            "the cable run both directions share: a crushed or kinked section, a bad termination",
            f"at {first} and at {second}: the connectors of both ends",
        ]
        return ends.view(Verdict.CABLE_FAULT, said, checks)
    if len(errs) != 1:
        return None
    near = errs[0]
    far = ends.b if near == ends.a else ends.a
    near_end, far_end = ends.name(near), ends.name(far)
    said = [
        f"{near_end} receives errored frames ({sig(rx_errors[near])}); {far_end} receives "
        f"clean: only the {far_end} \u2192 {near_end} direction is damaged",
        *losses,
    ]
    checks = [
        f"at {near_end}: its receive connector (clean and re-seat; inspect a fiber end face)",
        f"the {far_end} \u2192 {near_end} pair or strand of the cable, and its patch cords",
        f"at {far_end}: its transmit side",
    ]
    return ends.view(Verdict.CABLE_FAULT, said, checks)


def _worse_end(ends: _Ends, losses: list[str]) -> LinkView:
    """No two-ended sign: the worse of the two ends' verdicts stands for the link, and
    where they differ, why the one that sees a fault wins."""
    va, vb = ends.verdict[ends.a], ends.verdict[ends.b]
    worst = max((va, vb), key=lambda v: SEVERITY.get(v, 0) if v in FAULTS else -1)
    first, second = ends.name(ends.a), ends.name(ends.b)
    said = [f"{first} says {GUIDES[va].title}; {second} says {GUIDES[vb].title}", *losses]
    if va != vb and worst in FAULTS:
        seen_at = first if worst == va else second
        why = ONE_END_ONLY.get(worst, "each end counts only what it receives")
        title = GUIDES[worst].title
        said.append(f"{title} wins: {why}, so what {seen_at} sees need not show at the other end")
    return ends.view(worst, said, [])


def _counted(value: float, what: str, least: float) -> str:
    """``value`` of ``what`` in words ("400 late collisions"), or "" below ``least``."""
    if not _known(value) or value < least:
        return ""
    return f"{sig(value)} {what}{'' if value == 1 else 's'}"


def _listed(parts: list[str]) -> str:
    """Counts said in brackets after a sentence, or nothing where none were counted."""
    shown = [p for p in parts if p]
    return f" ({', '.join(shown)})" if shown else ""
