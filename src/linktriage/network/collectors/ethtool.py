"""What ``ethtool --json`` prints, read into format 1.2's fields.

Each command learnt JSON in its own ethtool release (from ethtool's git history): pause in
2020, FEC in 2021, the settings in 6.10 (2024), the module's identity and diagnostics in
the first release after 6.11 (commits of January and February 2025). An older ethtool
refuses ``--json`` for a command ("JSON output not available"): that command adds nothing.

Four commands, each answered by the kernel's ethtool netlink interface:

* ``ethtool --json DEV``: link modes. ``supported-link-modes`` gives the port's highest
  speed, ``link-partner-advertised-link-modes`` the speeds the far end's PHY advertises
  (IEEE 802.3 clause 28 and its successors), ``port`` the medium, ``lanes`` the lanes.
* ``ethtool --json -I --show-fec DEV``: the active FEC encoding and its statistics, which the
  kernel defines as IEEE 802.3 30.5.1.1.17 aFECCorrectedBlocks and 30.5.1.1.18
  aFECUncorrectableBlocks (plus corrected bits, not an IEEE attribute), totals then lanes.
* ``ethtool --json -I -a DEV``: pause statistics, 30.3.4.2 aPAUSEMACCtrlFramesTransmitted
  and 30.3.4.3 aPAUSEMACCtrlFramesReceived, the attributes RFC 3635's dot3HCOutPauseFrames
  and dot3HCInPauseFrames count.
* ``ethtool --json -m DEV``: the module's identity and digital diagnostics (SFF-8472 for SFP,
  SFF-8636 for QSFP, CMIS), in mW, mA and degrees C, with its own thresholds.

Shapes, as ethtool's source prints them (netlink/settings.c, fec.c, pause.c, sfpid.c,
sfpdiag.c, qsfp.c, cmis.c, sff-common.c; recorded outputs in fixtures/ethtool/): one JSON
array of one object per command. Two quirks are handled. The module output repeats keys:
``module_temperature``, ``laser_bias_current`` and ``laser_output_power`` are first the
reading (a number), then the thresholds (an object), so keys are read in order rather than
into a dict. And for an SFP read over netlink, ethtool closes the JSON after the A0h page
and prints the A2h diagnostics as its plain ``label : value`` text, which is read too.
"""

from __future__ import annotations

import json
import math
import re
from collections.abc import Iterator
from dataclasses import dataclass, field
from typing import Any, Literal

from linktriage.engine.format.snapshot import FecMode, Lane, Optics

Pairs = list[tuple[str, Any]]

#: The lowest light an SFF-8472 module reports, one LSB of 0.1 uW: what a reading of 0 mW
#: (no light) is taken for, since 0 mW has no dBm.
FLOOR_DBM = -40.0
#: ``port`` values (ethtool netlink/settings.c names_port) -> the format's media.
MEDIA: dict[str, Literal["copper", "fiber"]] = {
    "Twisted Pair": "copper",
    "Direct Attach Copper": "copper",
    "FIBRE": "fiber",
}
#: Pause statistics -> the EtherLike-MIB objects counting the same IEEE 802.3 attributes.
PAUSE = {"rx_pause_frames": "dot3HCInPauseFrames", "tx_pause_frames": "dot3HCOutPauseFrames"}
#: FEC statistics -> the format's FEC counters.
FEC = {
    "corrected_blocks": "aFECCorrectedBlocks",
    "uncorrectable_blocks": "aFECUncorrectableBlocks",
    "corrected_bits": "FECCorrectedBits",
}
#: Module thresholds: (ethtool's object, its key) -> the Optics field.
THRESHOLDS = {
    ("laser_rx_power", "high_alarm_threshold"): "rx_power_high_alarm_dbm",
    ("laser_rx_power", "high_warning_threshold"): "rx_power_high_warn_dbm",
    ("laser_rx_power", "low_alarm_threshold"): "rx_power_low_alarm_dbm",
    ("laser_rx_power", "low_warning_threshold"): "rx_power_low_warn_dbm",
    ("laser_output_power", "high_alarm_threshold"): "tx_power_high_alarm_dbm",
    ("laser_output_power", "low_alarm_threshold"): "tx_power_low_alarm_dbm",
    ("laser_output_power", "low_warning_threshold"): "tx_power_low_warn_dbm",
    ("module_temperature", "high_alarm_threshold"): "temperature_high_alarm_c",
    ("laser_bias_current", "high_alarm_threshold"): "bias_high_alarm_ma",
    ("laser_bias_current", "low_alarm_threshold"): "bias_low_alarm_ma",
}
#: Power thresholds are in mW and become dBm.
_IN_MW = {"laser_rx_power", "laser_output_power"}


def documents(text: str) -> Iterator[Pairs]:
    """Each JSON object of ethtool's output as (key, value) pairs in order, nested objects
    too, so a repeated key keeps every value; text outside JSON is skipped."""
    decoder = json.JSONDecoder(object_pairs_hook=list)
    at = 0
    while (start := text.find("[", at)) >= 0:
        try:
            value, at = decoder.raw_decode(text, start)
        except ValueError:
            at = start + 1
            continue
        items = value if isinstance(value, list) else [value]
        yield from (item for item in items if isinstance(item, list) and _is_pairs(item))


def _is_pairs(value: list[Any]) -> bool:
    return all(isinstance(p, tuple) and len(p) == 2 and isinstance(p[0], str) for p in value)


def _get(pairs: Any, key: str) -> Any:
    """The last value of ``key`` in a decoded object (as json.loads would keep)."""
    found = None
    if isinstance(pairs, list) and _is_pairs(pairs):
        for name, value in pairs:
            if name == key:
                found = value
    return found


def _count(value: Any) -> int | None:
    return value if isinstance(value, int) and not isinstance(value, bool) and value >= 0 else None


def link_mode_speed(mode: str) -> int | None:
    """A kernel link mode name's speed in b/s: 1000baseT/Full is 1 Gb/s, 25000baseSR/Full
    25 Gb/s (the Mb/s before ``base``, ethtool's link mode strings)."""
    found = re.match(r"^(\d+)base", mode)
    return int(found.group(1)) * 1_000_000 if found else None


@dataclass(frozen=True, slots=True)
class LinkModes:
    """``ethtool --json DEV``: what the port and its link partner can do."""

    max_speed_bps: int | None = None
    partner_speeds_bps: list[int] | None = None
    media: Literal["copper", "fiber"] | None = None
    speed_mbps: int | None = None
    lanes: int | None = None


def link_modes(text: str) -> LinkModes:
    """The port's highest supported speed, the partner's advertised speeds (None where the
    PHY reports none: no autonegotiation, or a fiber link), its medium and lanes."""
    for doc in documents(text):
        supported = _get(doc, "supported-link-modes")
        partner = _get(doc, "link-partner-advertised-link-modes")
        speeds = [s for m in supported or [] if isinstance(m, str) and (s := link_mode_speed(m))]
        offered = sorted(
            {s for m in partner or [] if isinstance(m, str) and (s := link_mode_speed(m))}
        )
        return LinkModes(
            max_speed_bps=max(speeds) if speeds else None,
            partner_speeds_bps=offered or None,
            media=MEDIA.get(_get(doc, "port")),
            speed_mbps=_count(_get(doc, "speed")),
            lanes=_count(_get(doc, "lanes")),
        )
    return LinkModes()


def pause_counters(text: str) -> dict[str, int]:
    """``ethtool --json -I -a DEV``: the pause frames received and sent."""
    for doc in documents(text):
        statistics = _get(doc, "statistics")
        return {
            name: value
            for key, name in PAUSE.items()
            if (value := _count(_get(statistics, key))) is not None
        }
    return {}


@dataclass(frozen=True, slots=True)
class Fec:
    """``ethtool --json -I --show-fec DEV``: the active encoding and its counters."""

    mode: FecMode | None = None
    counters: dict[str, int] = field(default_factory=dict)


def fec(text: str, speed_mbps: int | None = None, lanes: int | None = None) -> Fec:
    """The active FEC encoding as the format names it, and the totals of its counters.

    ethtool names the encodings by the kernel's link modes: Off (None renamed), BaseR
    (IEEE 802.3 clause 74), RS and LLRS. RS does not say which Reed-Solomon code: it is
    RS(528,514) on 25 Gb/s lanes (NRZ, clauses 91 and 108) and RS(544,514) on 50 Gb/s lanes
    and faster (PAM4, clause 134 and after), as SNAPSHOT-FORMAT 1.2 has it, so the lane rate
    (speed over lanes; a 25 Gb/s link has one lane) decides where it is known, else ``rs``.
    LLRS, a code of its own, is none of the format's modes and is left out.
    """
    for doc in documents(text):
        active = _get(doc, "active")
        name = active[0] if isinstance(active, list) and active else None
        mode: FecMode | None = None
        if name in ("Off", "None"):
            mode = "none"
        elif name == "BaseR":
            mode = "base_r"
        elif name == "RS":
            mode = _rs(speed_mbps, lanes)
        statistics = _get(doc, "statistics")
        counters = {
            counter: total
            for key, counter in FEC.items()
            if (total := _count(_get(_get(statistics, key), "total"))) is not None
        }
        return Fec(mode, counters)
    return Fec()


def _rs(speed_mbps: int | None, lanes: int | None) -> FecMode:
    if speed_mbps and not lanes and speed_mbps == 25_000:
        lanes = 1
    if not speed_mbps or not lanes:
        return "rs"
    per_lane = speed_mbps / lanes
    if per_lane >= 50_000:
        return "rs544"
    if per_lane >= 25_000:
        return "rs528"
    return "rs"


@dataclass(frozen=True, slots=True)
class Module:
    """``ethtool --json -m DEV``: the module's readings and what it is."""

    optics: Optics | None = None
    pmd: str | None = None
    max_speed_bps: int | None = None


def dbm(milliwatts: float) -> float:
    """mW as dBm (10 log10 of P / 1 mW); no light, 0 mW, as the scale's floor."""
    return round(10 * math.log10(milliwatts), 2) if milliwatts > 0 else FLOOR_DBM


#: A line of ethtool's plain module text: "\tLabel<padding> : value".
_TEXT_LINE = re.compile(r"^\t(?P<label>[^:]+?)\s+: (?P<value>.*)$")
_NUMBER = re.compile(r"^-?\d+(?:\.\d+)?")
_THRESHOLD_TEXT = re.compile(
    r"^(?P<what>.+) (?P<level>high|low) (?P<kind>alarm|warning) threshold$"
)


def _text_pairs(text: str) -> Pairs:
    """ethtool's plain ``label : value`` lines (sfpdiag.c) as the pairs its JSON would
    give: labels lowered with spaces as underscores (module-common.c
    convert_json_field_name), thresholds gathered into objects, readings as numbers (the
    mW of "0.5640 mW / -2.49 dBm")."""
    pairs: Pairs = []
    thresholds: dict[str, Pairs] = {}
    for line in text.splitlines():
        found = _TEXT_LINE.match(line)
        if not found:
            continue
        label, value = found.group("label").strip(), found.group("value").strip()
        number = _NUMBER.match(value)
        reading: Any = float(number.group()) if number else value
        threshold = _THRESHOLD_TEXT.match(label)
        if threshold:
            what = _json_name(threshold.group("what"))
            key = f"{threshold.group('level')}_{threshold.group('kind')}_threshold"
            thresholds.setdefault(what, []).append((key, reading))
        elif label.startswith(("Receiver signal", "Rcvr signal")):
            pairs.append(("rx_power", [("value", reading)]))
        else:
            pairs.append((_json_name(label), reading))
    pairs += list(thresholds.items())
    return pairs


def _json_name(label: str) -> str:
    return label.lower().replace(" ", "_")


def module(text: str) -> Module:
    """The module's light, bias and temperature, with its own thresholds, one lane each
    where it has several (SFF-8636, CMIS); and its PMD where its compliance codes name an
    Ethernet one (``transceiver_type``), with that PMD's speed as the module's."""
    pairs: Pairs = [pair for doc in documents(text) for pair in doc]
    pairs += _text_pairs(text)
    if not pairs:
        return Module()
    readings: dict[str, Any] = {}
    limits: dict[str, float] = {}
    for key, value in pairs:
        if isinstance(value, list) and _is_pairs(value):  # an object: thresholds or rx_power
            if key == "rx_power":
                readings["rx"] = _get(value, "value")
                readings["rx_lanes"] = _get(value, "values")
            for name, threshold in value:
                field_name = THRESHOLDS.get((key, name))
                if field_name and isinstance(threshold, int | float):
                    limits[field_name] = dbm(threshold) if key in _IN_MW else float(threshold)
        elif isinstance(value, int | float) and not isinstance(value, bool):
            readings.setdefault(key, value)  # the reading comes before its thresholds
        elif isinstance(value, list | str):
            readings.setdefault(key, value)
    optics = _optics(readings, limits)
    pmd, speed = _pmd(
        readings.get("transceiver_type"), str(readings.get("identifier_description", ""))
    )
    if pmd is not None:
        optics = Optics(pmd=pmd) if optics is None else optics.model_copy(update={"pmd": pmd})
    return Module(optics, pmd, speed)


def _optics(readings: dict[str, Any], limits: dict[str, float]) -> Optics | None:
    values: dict[str, Any] = dict(limits)
    temperature = readings.get("module_temperature")
    if isinstance(temperature, int | float):
        values["temperature_c"] = float(temperature)
    bias = _numbers(readings.get("laser_tx_bias_current"))
    tx = _numbers(readings.get("transmit_avg_optical_power"))
    rx = _numbers(readings.get("rx_lanes"))
    if len(bias) > 1 or len(tx) > 1 or len(rx) > 1:
        count = max(len(bias), len(tx), len(rx))
        values["lanes"] = [
            Lane(
                rx_power_dbm=dbm(rx[i]) if i < len(rx) else None,
                tx_power_dbm=dbm(tx[i]) if i < len(tx) else None,
                bias_ma=bias[i] if i < len(bias) else None,
            )
            for i in range(count)
        ]
        # The module-level readings hold the weakest light and the highest bias where
        # lanes are given (SNAPSHOT-FORMAT 1.2).
        values |= {"rx_power_dbm": dbm(min(rx))} if rx else {}
        values |= {"tx_power_dbm": dbm(min(tx))} if tx else {}
        values |= {"bias_ma": max(bias)} if bias else {}
    else:
        single = {
            "bias_ma": readings.get("laser_bias_current"),
            "tx_power_dbm": readings.get("laser_output_power"),
            "rx_power_dbm": readings.get("rx"),
        }
        for name, value in single.items():
            if isinstance(value, int | float) and not isinstance(value, bool):
                values[name] = float(value) if name == "bias_ma" else dbm(value)
    return Optics(**values) if values else None


def _numbers(value: Any) -> list[float]:
    if not isinstance(value, list):
        return []
    return [float(v) for v in value if isinstance(v, int | float) and not isinstance(v, bool)]


#: An Ethernet PMD in ethtool's transceiver strings: "10G Base-LR", "25GBase-SR",
#: "10Gbase-T", "2.5GBASE-T", "1000BASE-SX", "100BASE-FX".
_PMD_G = re.compile(r"(\d+(?:\.\d+)?)\s*G\s*base-?([A-Za-z0-9]+)", re.IGNORECASE)
_PMD_M = re.compile(r"\b(\d+)BASE-([A-Za-z0-9/]+)")


def _pmd(transceiver: Any, identifier: str) -> tuple[str | None, int | None]:
    """The module's Ethernet PMD (and its speed) from ethtool's ``transceiver_type``.

    SFF-8024's extended codes name two form factors at once ("100G Base-SR4 or
    25GBase-SR"): a QSFP module is the one of several lanes (a name ending in its lane
    count), an SFP the other. Codes of Fibre Channel, SONET or InfiniBand name no Ethernet
    PMD, and neither does a code without a speed (BASE-BX10)."""
    if not isinstance(transceiver, str) or ":" not in transceiver:
        return None, None
    family, _, names = transceiver.partition(":")
    if not ("Ethernet" in family or family.strip() == "Extended"):
        return None, None
    found: list[tuple[str, int]] = []
    for name in re.split(r",? or |, ", names):
        if g := _PMD_G.search(name):
            speed = round(float(g.group(1)) * 1e9)
            found.append((f"{g.group(1)}GBASE-{g.group(2).upper()}", speed))
        elif m := _PMD_M.search(name):
            found.append((f"{m.group(1)}BASE-{m.group(2).upper()}", int(m.group(1)) * 1_000_000))
    if not found:
        return None, None
    if len(found) > 1:
        several = "QSFP" in identifier or "OSFP" in identifier
        fitting = [f for f in found if f[0][-1].isdigit() == several]
        found = fitting or found
    return found[0]
