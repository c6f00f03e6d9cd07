"""An answer's headline: what was measured, and at which end, before the verdict's name.

An engineer reads "receive errors at lark-east-idf2 port14, 200 times the 1000BASE-T
objective" and knows where to walk and why; the verdict id follows beside it. The
headline is the first reading the verdict rests on, cut to its first clause and placed at
the port it was read on (a reading of the far end already names that end).
"""

from __future__ import annotations

import re

from linktriage.engine.format.answers import DiagnosisRecord, EvidenceRecord

#: Readings whose first clause says how they were measured and whose second says what it
#: means: the headline names the quantity, then the meaning.
_AGAINST_A_LEVEL = {
    "bit_error_ratio": "receive errors",
    "pre_fec_ber": "errors before FEC",
}
#: Readings that say a state of the port: the port first.
_STATES = frozenset({"oper_status", "admin_status", "disabled_reason", "polls", "poe_detection"})
_AT_FAR_END = re.compile(r"^at (?P<end>[^:]+): ")


def capitalised(line: str) -> str:
    """A headline as the first line of an answer: its first word capitalised where it is a
    word of English, never where it is a device's name ("lark-core1" stays as it is)."""
    first = line.split(" ", 1)[0]
    return line[:1].upper() + line[1:] if first.isalpha() and first.islower() else line


def _first_clause(text: str) -> str:
    """Up to the first colon or semicolon: the reading, without its gloss."""
    return re.split(r": |; ", text, maxsplit=1)[0]


def answer_headline(record: DiagnosisRecord) -> str:
    """What was measured and where, e.g. "receive errors at sw1 port14, 200 times the
    1000BASE-T objective of 1e-10"; the port and the verdict's words where nothing was."""
    where = f"{record['device']} {record['port']}"
    if not record["evidence"]:
        return f"{where}: {record['title']}"
    return _said_at(record["evidence"][0], where)


def _said_at(item: EvidenceRecord, where: str) -> str:
    said = item["said"]
    far = _AT_FAR_END.match(said)
    if far is not None:  # a far end's reading names its own end
        where, said = far["end"], said[far.end() :]
    feature = item["feature"]
    if feature == "link":  # a link's reason names both ends; its conclusion comes last
        return said.rsplit(": ", 1)[-1]
    if feature in _AGAINST_A_LEVEL and ": " in said:
        meaning = said.split(": ", 1)[1].split(", at least", 1)[0]
        return f"{_AGAINST_A_LEVEL[feature]} at {where}, {meaning}"
    if feature in ("rx_power", "tx_power"):
        light = "received light" if feature == "rx_power" else "transmitted light"
        reading = re.sub(r"^(receiving|transmitting) ", "", said).split("; ", 1)[0]
        return f"{light} at {where}: {reading}"
    if feature in _STATES:
        return f"{where}: {said}"
    return f"{_first_clause(said)} at {where}"
