"""Both ends of a link: which ports face each other, and what the two views say together.

An engineer who suspects a link looks at both ends before walking anywhere, because each
end counts only what it receives (RFC 2863 and RFC 3635 counters are per receiving
interface): errors at one end only point at one direction's path; a duplex mismatch is
one end at half duplex and the other at full; a one-way link is confirmed by the far
end's transmit counter; the light a fiber direction loses is the far end's transmit power
minus the near end's received power.

**Pairing.** A port's ``neighbor`` (the far end as LLDP reports it, IEEE 802.1AB) names a
system and a port. It is matched to a port of the same input: the system name to a device
exactly, else ignoring case, else by its first DNS label (``lark-core1.example`` is ``lark-
core1``) where that is one device only; the port name exactly, else ignoring case, else with
its interface type written long or short alike (LLDP's port id is often the short
``ifName``, ``Gi1/0/5``, where a device lists ``GigabitEthernet1/0/5``:
:mod:`~linktriage.engine.format.port_names`), where that fits one port only. A far end whose
own neighbor names a third port is not paired (one of the two LLDP views is stale); a far
end that names no neighbor is paired (LLDP may run on one side only).
"""

from __future__ import annotations

from collections.abc import Callable, Sequence

import numpy as np
import numpy.typing as npt

from linktriage.engine.format.answers import Verdict
from linktriage.engine.format.port_names import normalise
from linktriage.engine.verdict_kit.ends import Column, Ends, LinkView
from linktriage.engine.verdicts import FAULTS, GUARDS, SEVERITY, TREE, kind_of

#: Each verdict's view from both ends, asked in their declared order.
_JUDGES = sorted((k.link for k in TREE if k.link is not None), key=lambda judge: judge.order)
#: Why a fault one end sees need not show at the other, where a verdict says.
_ONE_END_ONLY = {k.verdict: k.one_end_only for k in TREE if k.one_end_only is not None}
#: Verdicts of an end with no window to read two-ended signs from.
UNREAD = frozenset(k.verdict for k in GUARDS if not k.measured)


def _short(name: str) -> str:
    return name.split(".", 1)[0].casefold()


def lldp_key(device: str, port: str) -> tuple[str, str]:
    """A port as a neighbor's LLDP may name it, loosely: the system's first DNS label and
    the port with its type written alike, ignoring case (as :class:`PortMatcher` matches
    at its loosest)."""
    return _short(device), normalise(port)


class PortMatcher:
    """Finds the port a neighbor names among known ports (the module docstring says how)."""

    def __init__(self, device: Sequence[str], port: Sequence[str]) -> None:
        self.rows = {(d, p): i for i, (d, p) in enumerate(zip(device, port, strict=True))}
        self.folded = {(d.casefold(), p.casefold()): i for (d, p), i in self.rows.items()}
        self._typed: dict[tuple[str, str], int] | None = None  # built at the first miss
        self.by_label: dict[str, set[str]] = {}
        for d in set(device):
            self.by_label.setdefault(_short(d), set()).add(d)

    def find(self, far: str, far_port: str) -> int:
        """The row of the port named, or -1."""
        exact = self.rows.get((far, far_port))
        if exact is not None:
            return exact
        found = self._on(far.casefold(), far_port)
        if found is not None:
            return found
        named = self.by_label.get(_short(far), set())
        if len(named) == 1:
            (only,) = named
            found = self._on(only.casefold(), far_port)
        return -1 if found is None else found

    def _on(self, device: str, port: str) -> int | None:
        """The row of ``port`` on the device named ``device`` (case folded): the port's
        name in any case, else written alike (-1: two ports fit); None: none does."""
        found = self.folded.get((device, port.casefold()))
        return found if found is not None else self.typed().get((device, normalise(port)))

    def typed(self) -> dict[tuple[str, str], int]:
        """Every port by its name written alike (-1 where two ports of a device are), built
        only when a neighbor names a port otherwise than it is listed: most name it as is."""
        if self._typed is None:
            self._typed = {}
            for (d, p), i in self.folded.items():
                key = (d, normalise(p))
                self._typed[key] = -1 if key in self._typed else i
        return self._typed


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


def judge_link(
    a: int, b: int, verdict: Sequence[Verdict], column: Column, name: Callable[[int], str]
) -> LinkView:
    """The link between rows ``a`` and ``b`` seen from both ends, from ``a``'s side: the
    first view a verdict's link judge finds in the readings, in the judges' order, else the
    worse end's verdict."""
    ends = Ends(a, b, verdict, column, name)
    if {verdict[a], verdict[b]} & UNREAD:
        return _worse_end(ends)  # an end with nothing to measure shows no sign
    for judge in _JUDGES:
        judged = judge.judge(ends)
        if judged is not None:
            return judged
    return _worse_end(ends)


def _worse_end(ends: Ends) -> LinkView:
    """No two-ended sign: the worse of the two ends' verdicts stands for the link, and
    where they differ, why the one that sees a fault wins."""
    va, vb = ends.verdict[ends.a], ends.verdict[ends.b]
    worst = max((va, vb), key=lambda v: SEVERITY.get(v, 0) if v in FAULTS else -1)
    first, second = ends.name(ends.a), ends.name(ends.b)
    said = [
        f"{first} says {kind_of(va).title}; {second} says {kind_of(vb).title}",
        *ends.losses,
    ]
    if va != vb and worst in FAULTS:
        seen_at = first if worst == va else second
        why = _ONE_END_ONLY.get(worst, "each end counts only what it receives")
        title = kind_of(worst).title
        said.append(f"{title} wins: {why}, so what {seen_at} sees need not show at the other end")
    return ends.view(worst, said, [])
