"""Both ends of a link as a verdict's link judge reads them: the two rows, each end's own
verdict and measures, each end's name, and the light each fiber direction loses.

Each end counts only what it receives (RFC 2863 and RFC 3635 counters are per receiving
interface), so a judge reads the two views together: which end is half duplex, which
direction is silent while the other end sends, which strand loses light. A view it gives is
:class:`LinkView`: the link's verdict, why, and the checks, each naming its end.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass, field

from linktriage.engine.format.answers import Verdict
from linktriage.engine.measure.numbers import sig
from linktriage.engine.measure.phy import CHANNEL_LOSS_DB


@dataclass(frozen=True, slots=True)
class LinkView:
    """What both ends say together: the link's verdict, why, and the checks with the end
    each applies to."""

    verdict: Verdict
    said: tuple[str, ...]
    checks: tuple[str, ...]
    agree: bool  # whether both ends gave the link's verdict on their own


Column = Callable[[str], Sequence[float]]


def known(x: float) -> bool:
    return x == x  # not NaN


@dataclass(slots=True)
class Ends:
    """The two rows of a link (``a`` the end asked about) and what is read at each; the
    light each direction loses is worked out once, for every judge."""

    a: int
    b: int
    verdict: Sequence[Verdict]
    column: Column
    name: Callable[[int], str]
    losses: list[str] = field(init=False)  # each direction's loss in words, a lossy one first
    lossy: list[tuple[int, int]] = field(init=False)  # (sender, receiver) over the allowance

    def __post_init__(self) -> None:
        self.losses, self.lossy = _light_lost(self)

    def both(self) -> tuple[tuple[int, int], tuple[int, int]]:
        return (self.a, self.b), (self.b, self.a)

    def view(self, link: Verdict, said: list[str], checks: list[str]) -> LinkView:
        agree = self.verdict[self.a] == link and self.verdict[self.b] == link
        return LinkView(link, tuple(said), tuple(checks), agree)


def _light_lost(ends: Ends) -> tuple[list[str], list[tuple[int, int]]]:
    """The light each direction loses (far end's transmit power minus near end's received
    power), in words, a lossy direction first, and the directions that lose more than any
    PMD of the speed allows."""
    rx_dbm, tx_dbm = ends.column("rx_dbm"), ends.column("tx_dbm")
    speed = ends.column("speed_bps")[ends.a]
    allowed = CHANNEL_LOSS_DB.get(int(speed)) if known(speed) else None
    said: list[str] = []
    lossy: list[tuple[int, int]] = []
    for tx, rx in ends.both():
        if not (known(tx_dbm[tx]) and known(rx_dbm[rx])):
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


def counted_words(value: float, what: str, least: float) -> str:
    """``value`` of ``what`` in words ("400 late collisions"), or "" below ``least``."""
    if not known(value) or value < least:
        return ""
    return f"{sig(value)} {what}{'' if value == 1 else 's'}"


def listed(parts: list[str]) -> str:
    """Counts said in brackets after a sentence, or nothing where none were counted."""
    shown = [p for p in parts if p]
    return f" ({', '.join(shown)})" if shown else ""
