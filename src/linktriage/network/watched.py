"""The network linktriage watches: which ports it may ask about, and reading them now.

Chat commands and jobs name ports only through a :class:`Network`; a name it does not
list is refused before anything is polled. The demo network is one implementation.
"""

from __future__ import annotations

import difflib
import ipaddress
from abc import ABC, abstractmethod
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from linktriage.engine.format.poll_table import PollTable
from linktriage.engine.format.port_names import normalise
from linktriage.errors import AmbiguousNameError, PollError, UnknownPortError
from linktriage.printable import printable

#: Typed in place of a device (``port-of lark-circ-prn1``): the port is then named by the
#: LLDP neighbor at its far end.
BEHIND = "port-of"


@dataclass(frozen=True, slots=True)
class Gathered:
    """What polling several devices gave: a table per device that answered, the reason
    for each device that did not, and ports whose answers were malformed."""

    tables: dict[str, PollTable]
    failed: dict[str, str]  # device -> why
    problems: dict[tuple[str, str], str]  # (device, port) -> what was wrong


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

    def poll_many(self, wanted: dict[str, list[str] | None]) -> Gathered:
        """Poll several devices (ports None: all of them); one that fails does not stop the
        others. Implementations that can should read the devices at once."""
        tables: dict[str, PollTable] = {}
        failed: dict[str, str] = {}
        for device, ports in wanted.items():
            try:
                tables[device] = self.poll(device, ports)
            except PollError as exc:
                failed[device] = exc.reason
        return Gathered(tables, failed, {})

    def history(self, wanted: dict[str, list[str]], since: float) -> Gathered:
        """Polls since ``since`` from devices whose source keeps history (a time-series
        database); devices without one are absent from the answer. By default: none."""
        return Gathered({}, {}, {})

    def unlisted(self) -> dict[str, str]:
        """Devices whose ports could not be listed (so none of them is among ``ports``), and
        why: a list of ports must never pass over them in silence. By default: none."""
        return {}

    def close(self) -> None:  # noqa: B027 (optional: most networks hold nothing)
        """Release what reading the network holds (connections, the poll loop)."""

    def site_of(self, device: str) -> str | None:
        """The site a device belongs to, listed or not."""
        refs = self.devices().get(device)
        return refs[0].site if refs else None

    def sites(self) -> list[str]:
        return sorted({p.site for p in self.ports()})

    def devices(self) -> dict[str, list[PortRef]]:
        out: dict[str, list[PortRef]] = {}
        for ref in self.ports():
            out.setdefault(ref.device, []).append(ref)
        return out

    def device_names(self) -> list[str]:
        """Every device's name; implementations answer without contacting any device."""
        return list(self.devices())

    def ports_of(self, device: str) -> list[PortRef]:
        """The ports of one known device."""
        return self.devices()[device]

    def addresses(self) -> dict[str, str]:
        """Each device's management address (an IP address or a host name) by its name,
        for people who name a device by where it is; by default: none."""
        return {}

    def find(
        self, device: str, port: str, *, heard: Callable[[], PollTable] | None = None
    ) -> PortRef:
        """The port a person named, refusing names the network does not have.

        A device may be named by its name, its address, or any unique part of its name
        ("idf2" for "lark-east-idf2"); a part that fits several devices is ambiguous. A
        port is named as its device lists it, in any case, or with its type written short
        or long (:mod:`~linktriage.engine.format.port_names`). With :data:`BEHIND` for the
        device, ``port`` names what LLDP hears at the port's far end, as ``heard`` (what
        the ports last said) tells. The name is settled before any device is contacted.
        """
        if device.casefold() == BEHIND:
            return self.behind(port, heard() if heard is not None else PollTable.empty())
        name = device_named(device, self.device_names(), self.addresses())
        return port_named(port, self.ports_of(name), name)

    def behind(self, neighbor: str, heard: PollTable) -> PortRef:
        """The port whose far end LLDP names ``neighbor`` (a printer, a phone, a server the
        network need not read), as each port's newest poll in ``heard`` says: the name in
        any case, else its first DNS label. Refuses a name no port hears, with the closest
        names heard, and a name that several ports hear, naming each."""
        devices = set(self.device_names())
        last = {key: far for key, far in _last_heard(heard).items() if key[0] in devices}
        fits = [key for key, far in last.items() if far.casefold() == neighbor.casefold()]
        if not fits:
            label = _first_label(neighbor)
            fits = [key for key, far in last.items() if _first_label(far) == label]
        refs = [r for device, port in sorted(fits) for r in self.ports_of(device) if r.port == port]
        if len(refs) == 1:
            return refs[0]
        if refs:
            raise AmbiguousNameError(
                f"'{printable(neighbor)}' is the LLDP neighbor of {len(refs)} ports.",
                candidates=[f"{r.device} {r.port}" for r in refs],
            )
        said = sorted(set(last.values()))
        raise UnknownPortError(
            f"No port has '{printable(neighbor)}' as its LLDP neighbor"
            + ("." if said else ": no stored poll names any neighbor yet."),
            suggestions=difflib.get_close_matches(neighbor, said, n=3, cutoff=0.5),
        )


def fitting(text: str, names: list[str]) -> list[str]:
    """The names a person may mean by ``text``: the one it names in full (in any case), else
    every name that holds it as a part."""
    lowered = text.lower()
    whole = [n for n in names if n.lower() == lowered]
    return whole[:1] or [n for n in names if lowered in n.lower()]


def device_named(text: str, names: list[str], addresses: Mapping[str, str] | None = None) -> str:
    """The device a person named: its full name in any case, its address (``addresses``:
    by name), or any part of its name that fits one device only; refuses a part or an
    address that fits several devices, or none."""
    addresses = addresses or {}
    lowered = text.lower()
    whole = [n for n in names if n.lower() == lowered]
    at = [name for name, address in addresses.items() if _same_address(address, text)]
    partial = whole[:1] or at or [n for n in names if lowered in n.lower()]
    if len(partial) == 1:
        return partial[0]
    if partial:
        raise AmbiguousNameError(
            f"'{printable(text)}' fits {len(partial)} devices.", candidates=sorted(partial)
        )
    if _ip(text) is not None:
        raise UnknownPortError(
            f"No device is at {printable(text)}.",
            suggestions=difflib.get_close_matches(text, list(addresses.values()), n=3),
        )
    raise UnknownPortError(
        f"No device named '{printable(text)}'.",
        suggestions=difflib.get_close_matches(text, names, n=3, cutoff=0.5),
    )


def _same_address(listed: str, typed: str) -> bool:
    """Whether two addresses name one host: IP addresses by value, whatever their written
    form (RFC 4291 section 2.2 writes one IPv6 address several ways), host names in any
    case and with or without the root's final dot."""
    ips = _ip(listed), _ip(typed)
    if ips != (None, None):
        return ips[0] == ips[1]
    return listed.casefold().rstrip(".") == typed.casefold().rstrip(".")


def port_named(text: str, refs: list[PortRef], device: str) -> PortRef:
    """The port of ``device`` (its ports: ``refs``) a person named: as listed, else in
    another case, else with its type written the other way (``Gi1/0/5`` for
    ``GigabitEthernet1/0/5`` and back); a name that fits several ports at once is refused,
    naming them, and one that fits none gets the closest names, types written alike."""
    exact = [r for r in refs if r.port == text]
    if exact:
        return exact[0]
    for spelt in (str.casefold, normalise):
        fits = [r for r in refs if spelt(r.port) == spelt(text)]
        if len(fits) == 1:
            return fits[0]
        if fits:
            raise AmbiguousNameError(
                f"'{printable(text)}' fits {len(fits)} ports of {device}.",
                candidates=[r.port for r in fits],
            )
    alike: dict[str, list[str]] = {}
    for ref in refs:
        alike.setdefault(normalise(ref.port), []).append(ref.port)
    close = difflib.get_close_matches(normalise(text), list(alike), n=3, cutoff=0.5)
    raise UnknownPortError(
        f"{device} has no port named '{printable(text)}'.",
        suggestions=[port for key in close for port in alike[key]][:3],
    )


def _last_heard(heard: PollTable) -> dict[tuple[str, str], str]:
    """The LLDP neighbor each port's newest poll names (a port that names none is left
    out: what it named before is no longer behind it)."""
    last: dict[tuple[str, str], str | None] = {}
    for row in np.argsort(heard.time, kind="stable").tolist():
        last[(heard.device[row], heard.port[row])] = heard.neighbor_device[row]
    return {key: far for key, far in last.items() if far is not None}


def _first_label(name: str) -> str:
    """A system name as LLDP may shorten it: its first DNS label (``lark-core1`` for
    ``lark-core1.example``), in lower case; an IP address whole."""
    ip = _ip(name)
    return name.split(".", 1)[0].casefold() if ip is None else str(ip)


def _ip(text: str) -> ipaddress.IPv4Address | ipaddress.IPv6Address | None:
    """``text`` read as an IP address, or None where it is not one."""
    try:
        return ipaddress.ip_address(text)
    except ValueError:
        return None
