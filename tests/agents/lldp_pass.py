"""An snmpd pass_persist program serving fixed tables net-snmp does not implement itself
(LLDP-MIB, and for format 1.2 dot3PauseTable, POWER-ETHERNET-MIB, IEEE8023-LAG-MIB,
ifStackTable): ``lldp_pass.py TABLE.json``, the table an object of OID -> [type, value]
with the types snmpd.conf(5) names for pass (``octet`` values as space-separated hex), and
``counter64``, which net-snmp 5.9 accepts though its manual says otherwise.

It speaks the pass_persist protocol of snmpd.conf(5): PING is answered PONG; ``get`` and
``getnext`` with an OID are answered with the OID, type and value, or NONE.
"""

from __future__ import annotations

import json
import sys


def key(oid: str) -> list[int]:
    return [int(part) for part in oid.strip(".").split(".")]


def main() -> None:
    with open(sys.argv[1], encoding="utf-8") as table_file:
        table = {f".{oid.strip('.')}": value for oid, value in json.load(table_file).items()}
    ordered = sorted(table, key=key)
    for command in sys.stdin:
        command = command.strip()
        if command == "PING":
            print("PONG", flush=True)
            continue
        asked = sys.stdin.readline().strip()
        if command == "get":
            found = asked if asked in table else None
        elif command == "getnext":
            found = next((oid for oid in ordered if key(oid) > key(asked)), None)
        else:  # set, or anything else: this table is read-only
            print("not-writable", flush=True)
            continue
        if found is None:
            print("NONE", flush=True)
        else:
            kind, value = table[found]
            print(found, kind, value, sep="\n", flush=True)


if __name__ == "__main__":
    main()
