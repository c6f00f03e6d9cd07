"""The diagnosis pipeline: from a poll table to a verdict per port that an engineer can audit.

polls -> windows -> measures -> features -> physics -> guards -> pruned tree -> records. The
physics says which verdicts each port's readings allow (each rule with its reason); the
tree ranks among those; where its first choice is ruled out the record says by which rule,
and where one reading's change would lead the tree to another verdict, which change
(:mod:`linktriage.engine.model.nearest`). The whole batch is computed column-wise
(:class:`~linktriage.engine.diagnosis.batch.DiagnosisBatch`); a large input is diagnosed a
chunk of ports at a time.
"""

from __future__ import annotations

from collections.abc import Iterator

import numpy as np
import numpy.typing as npt

from linktriage.engine.diagnosis.batch import NO_FIT_NOTE, DiagnosisBatch
from linktriage.engine.diagnosis.confidence import RESTARTED, frames_holding, tree_confidence
from linktriage.engine.diagnosis.loaded_model import Model
from linktriage.engine.format.poll_table import PollTable
from linktriage.engine.guards import apply_guards
from linktriage.engine.links import pair_ends
from linktriage.engine.measure.measures import measure, speed_media_pairs
from linktriage.engine.measure.now import now_and_before
from linktriage.engine.measure.phy import phy_name
from linktriage.engine.measure.window import DEFAULT_MAX_WINDOW_S, compute_windows, port_codes
from linktriage.engine.model.features import feature_rows
from linktriage.engine.physics import allowed
from linktriage.engine.verdicts.healthy import HEALTHY
from linktriage.gc_pause import gc_paused


def _flags(values: npt.NDArray[np.float64]) -> list[bool | None]:
    return [None if v != v else bool(v) for v in values.tolist()]  # v != v: NaN


def _phy_names(speed: npt.NDArray[np.float64], fiber: npt.NDArray[np.float64]) -> list[str | None]:
    """PHY family per port, worked out once per distinct (speed, medium)."""
    pairs, codes = speed_media_pairs(speed, fiber)
    names = [phy_name(s, f) for s, f in pairs]
    return [names[c] for c in codes.tolist()]


def _joined(window: str, faults: str, fit: str) -> str | None:
    """A port's notes as one; most ports have none, and pay no join."""
    if not (window or faults or fit):
        return None
    return "; ".join(n for n in (window, faults, fit) if n)


def diagnose(
    polls: PollTable, model: Model, *, max_window_s: float = DEFAULT_MAX_WINDOW_S
) -> DiagnosisBatch:
    """Diagnose every port in ``polls`` with ``model``."""
    with gc_paused():  # per-port lists of small acyclic objects (see linktriage.gc_pause)
        return _diagnose(polls, model, max_window_s)


#: Ports diagnosed at once by diagnose_chunks: the working arrays of a chunk take a few
#: tens of MB, where a whole file's took more than the file itself.
CHUNK_PORTS = 5000


def diagnose_chunks(
    polls: PollTable,
    model: Model,
    *,
    max_window_s: float = DEFAULT_MAX_WINDOW_S,
    ports: int = CHUNK_PORTS,
) -> Iterator[DiagnosisBatch]:
    """The diagnoses :func:`diagnose` gives, ``ports`` ports at a time (more where one
    device has more), so that a large file is diagnosed and written in little more memory
    than its polls. Every port of a device is diagnosed in one chunk, so that an answer that
    looks across ports (a loop seen on several ports of one device) sees them all, and both
    ends of a link (LLDP) in the chunk of the end that came first, so that each answer
    carries its far end (that end then leaves its device's chunk). Devices come in the order
    their first port does, each device's ports in the order :func:`diagnose` gives them."""
    codes, count = port_codes(polls)
    if count <= ports:
        yield diagnose(polls, model, max_window_s=max_window_s)
        return
    chunk = _chunks_of_ports(polls, codes, count, ports)[codes]
    order = np.argsort(chunk, kind="stable")
    starts = np.searchsorted(chunk[order], np.arange(int(chunk.max()) + 1))
    ends = [*starts[1:].tolist(), len(order)]
    for start, end in zip(starts.tolist(), ends, strict=True):
        rows = np.sort(order[start:end])  # the rows in file order, as diagnose reads them
        yield diagnose(polls.take(rows), model, max_window_s=max_window_s)


def _chunks_of_ports(
    polls: PollTable, codes: npt.NDArray[np.intp], count: int, ports: int
) -> npt.NDArray[np.intp]:
    """Each port's chunk: the ports of a device together, in order of the device's first
    port, a port whose far end is in the file placed with whichever end came first; groups
    packed into chunks of about ``ports`` ports, never split."""
    last = np.empty(count, np.intp)
    last[codes] = np.arange(len(codes))  # one row of each port, to read its names from
    _, device_of = np.unique(polls.device[last], return_inverse=True)
    first = np.full(int(device_of.max()) + 1, count, np.intp)
    np.minimum.at(first, device_of, np.arange(count))
    lead = first[device_of]
    if (polls.neighbor_device != None).any():  # noqa: E711 (elementwise, on objects)
        far = pair_ends(
            polls.device[last].tolist(),
            polls.port[last].tolist(),
            polls.neighbor_device[last].tolist(),
            polls.neighbor_port[last].tolist(),
        )
        lead = np.where(far >= 0, np.minimum(lead, lead[np.maximum(far, 0)]), lead)
    order = np.argsort(lead, kind="stable")
    group_start = np.flatnonzero(np.r_[True, lead[order][1:] != lead[order][:-1]])
    sizes = np.diff(np.r_[group_start, count]).tolist()
    chunk_of_group, chunk, filled = [], 0, 0
    for size in sizes:  # one step per device: greedy packing, a group never split
        if filled and filled + size > ports:
            chunk, filled = chunk + 1, 0
        chunk_of_group.append(chunk)
        filled += size
    chunk_of = np.empty(count, np.intp)
    chunk_of[order] = np.repeat(np.array(chunk_of_group, np.intp), sizes)
    return chunk_of


def _diagnose(polls: PollTable, model: Model, max_window_s: float) -> DiagnosisBatch:
    codes, _ = port_codes(polls)
    windows = compute_windows(polls, max_window_s=max_window_s, codes=codes)
    windows, measured = now_and_before(polls, codes, windows, measure(windows), max_window_s)
    m = measured.table
    rows = feature_rows(m)
    ok = allowed(m)
    guarded = apply_guards(windows, ok, m)

    tree = model.tree
    leaf = tree.apply(rows.matrix())
    mask = ok.mask[:, model.class_columns]
    choice = tree.choose(leaf, mask)
    # Nothing allowed, yet frames enough to judge: no verdict fits every reading, and the
    # tree's own answer stands, with a note saying so.
    unfit = choice.klass < 0
    klass = np.where(unfit, choice.first, choice.klass)
    node = np.where(unfit, leaf, choice.node)
    share = np.where(unfit, tree.proba[leaf, choice.first], choice.confidence)
    values = rows.values.matrix(np.float64)
    reported = rows.reported.matrix(np.bool_)
    confidence = tree_confidence(tree, node, klass, share, mask, values, reported)
    first_ruled_out = ~mask[np.arange(len(leaf)), choice.first] & ~unfit

    is_guarded = np.array([g is not None for g in guarded], np.bool_)
    # A guard's answer does not come from the tree: no change of a feature moves it.
    nearest = model.counterfactuals.find(values, mask, reported & ~is_guarded[:, None])
    verdict = [
        g if g is not None else c
        for g, c in zip(guarded, tree.classes[klass].tolist(), strict=True)
    ]
    healthy = np.array([v == HEALTHY for v in verdict], np.bool_)
    confidence *= np.where(healthy, frames_holding(m["rx_frames"], m["frames_needed"]), 1.0)
    confidence *= np.where(windows.restarted, RESTARTED, 1.0)
    first = tree.classes[choice.first]
    ruled_out = [
        f if r and not g else None
        for f, r, g in zip(
            first.tolist(), first_ruled_out.tolist(), is_guarded.tolist(), strict=True
        )
    ]
    notes = [
        _joined(w, c, NO_FIT_NOTE if u and not g else "")
        for w, c, u, g in zip(
            windows.note.tolist(),
            measured.counter_faults,
            unfit.tolist(),
            is_guarded.tolist(),
            strict=True,
        )
    ]
    return DiagnosisBatch(
        model=model,
        windows=windows,
        measures=m,
        features=rows,
        allowed=ok,
        device=[str(d) for d in windows.device],
        port=[str(p) for p in windows.port],
        verdict=verdict,
        confidence=[
            None if g else c
            for g, c in zip(is_guarded.tolist(), confidence.round(4).tolist(), strict=True)
        ],
        node=np.where(is_guarded, -1, node).tolist(),
        ruled_out=ruled_out,
        values=values,
        reported=reported,
        nearest=nearest,
        fiber=_flags(m["fiber"]),
        poe=_flags(windows.state["poe"]),
        phy=_phy_names(m["speed_bps"], m["fiber"]),
        window_s=windows.window_s.tolist(),
        far=pair_ends(
            windows.device.tolist(),
            windows.port.tolist(),
            windows.neighbor_device.tolist(),
            windows.neighbor_port.tolist(),
        ).tolist(),
        polls=windows.polls_used.tolist(),
        note=notes,
    )
