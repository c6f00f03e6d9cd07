"""The network linktriage watches: which ports it may ask about, and reading them now.

Chat commands and jobs name ports only through a :class:`Network`; a name it does not
list is refused before anything is polled. The demo network is one implementation.
"""

from __future__ import annotations

import difflib
from abc import ABC, abstractmethod
from collections.abc import Sequence
from dataclasses import dataclass

from linktriage.errors import AmbiguousNameError, UnknownPortError
from linktriage.polls import PollTable


@dataclass(frozen=True, slots=True)
class PortRef:
    """One port the network knows: where it is and what it serves."""

    site: str
    device: str
    port: str
    serves: str = ""


class Network(ABC):
    """Ports to watch and a way to poll them.

    ``poll`` returns one row per requested port, read at one instant, in the snapshot
    format's columns; it raises :class:`linktriage.errors.PollError` naming the device when
    the device cannot be read.
    """

    @abstractmethod
    def ports(self) -> list[PortRef]:
        """Every port, grouped by device in a stable order."""

    @abstractmethod
    def poll(self, device: str, ports: Sequence[str] | None = None) -> PollTable:
        """Read the counters of some ports (default: all) of one device now."""

    def sites(self) -> list[str]:
        return sorted({p.site for p in self.ports()})

    def devices(self) -> dict[str, list[PortRef]]:
        out: dict[str, list[PortRef]] = {}
        for ref in self.ports():
            out.setdefault(ref.device, []).append(ref)
        return out

    def find(self, device: str, port: str) -> PortRef:
        """The port a person named, refusing names the network does not have.

        A device may be named by any unique part of its name ("idf2" for
        "lark-east-idf2"); a part that fits several devices is ambiguous.
        """
        devices = self.devices()
        name = self._device_name(device, list(devices))
        refs = {r.port.lower(): r for r in devices[name]}
        ref = refs.get(port.lower())
        if ref is None:
            known = [r.port for r in devices[name]]
            raise UnknownPortError(
                f"{name} has no port named {port!r}.",
                suggestions=difflib.get_close_matches(port, known, n=3, cutoff=0.5),
            )
        return ref

    @staticmethod
    def _device_name(text: str, names: list[str]) -> str:
        lowered = {n.lower(): n for n in names}
        if text.lower() in lowered:
            return lowered[text.lower()]
        partial = [n for n in names if text.lower() in n.lower()]
        if len(partial) == 1:
            return partial[0]
        if partial:
            raise AmbiguousNameError(
                f"{text!r} fits {len(partial)} devices.", candidates=sorted(partial)
            )
        raise UnknownPortError(
            f"No device named {text!r}.",
            suggestions=difflib.get_close_matches(text, names, n=3, cutoff=0.5),
        )
