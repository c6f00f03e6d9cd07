"""Interface names as engineers type them: ``Gi1/0/5`` for ``GigabitEthernet1/0/5`` and
back, in any case, so that a name typed short finds the port a device lists long.

The table is common practice of switch command lines (their ``show`` output shortens the
interface types this way and their parsers take the short forms back); no standard defines
it, and it is written from memory. Names whose type is not in it (Junos ``xe-0/0/1``,
``et-0/0/0``, ``ge-0/0/0``, the demo's ``port14``, Linux ``enp3s0``) are short already and
compare in any case.
"""

from __future__ import annotations

import re

#: Each interface type as devices list it, with the short forms people type for it.
TYPES: dict[str, tuple[str, ...]] = {
    "FastEthernet": ("Fa",),
    "GigabitEthernet": ("Gi", "Gig"),
    "TwoGigabitEthernet": ("Tw",),
    "FiveGigabitEthernet": ("Fi",),
    "TenGigabitEthernet": ("Te", "TenGigE"),
    "TwentyFiveGigE": ("Twe",),
    "FortyGigabitEthernet": ("Fo", "FortyGigE"),
    "HundredGigE": ("Hu",),
    "Ethernet": ("Eth", "Et"),
    "Port-channel": ("Po",),
    "Management": ("Mgmt", "Ma"),
    "Vlan": ("Vl",),
    "Loopback": ("Lo",),
}

_LONG = {
    spelt.casefold(): long.casefold() for long, shorts in TYPES.items() for spelt in (long, *shorts)
}
#: A type (letters, words joined by hyphens) then its numbers, which start with a digit
#: (``1/0/5``, ``1/0/5.100``, ``0``); a space may sit between them. Junos's ``xe-0/0/1``
#: has a hyphen before its digits, so it is not read as a type of this table.
_TYPED = re.compile(r"([a-z]+(?:-[a-z]+)*)\s*(\d.*)")


def normalise(name: str) -> str:
    """One spelling for every way of writing a port's name: its type written long (as in
    :data:`TYPES`), then its numbers, all in lower case; a name of another shape, or of a
    type the table does not hold, is only put in lower case."""
    folded = name.strip().casefold()
    typed = _TYPED.fullmatch(folded)
    if typed is None or typed[1] not in _LONG:
        return folded
    return _LONG[typed[1]] + typed[2]
