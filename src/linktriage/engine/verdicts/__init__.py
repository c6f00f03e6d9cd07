"""Every verdict of the snapshot format, one module each, gathered and checked here.

A verdict is one module of this package: its id, title and meaning, checks and cautions,
what the physics needs of a port's readings, its evidence, its simulator signature and
share of the prior, the phrases that name it, what both ends of a link show, and the demo
port it is planted on (:mod:`linktriage.engine.verdict_kit.declaration` says each part). The
registry imports every module of this package when it is first imported, orders the
verdicts as the snapshot format's table lists them, and refuses, there and then, a verdict
that misses a part or clashes with another. Nothing else lists verdicts.
"""

from __future__ import annotations

import importlib
import pkgutil
import re
from collections import Counter
from typing import NoReturn

from linktriage.engine.format.answers import Verdict
from linktriage.engine.verdict_kit.declaration import (
    NEEDS,
    Caution,
    Check,
    GuardVerdict,
    TreeVerdict,
    VerdictKind,
)
from linktriage.errors import VerdictDeclarationError

_ID = re.compile(r"[a-z][a-z0-9_]*")


def _gathered() -> tuple[VerdictKind, ...]:
    """The KIND of every module of this package, in the format's order."""
    kinds = []
    for info in pkgutil.iter_modules(__path__):
        module = importlib.import_module(f"{__name__}.{info.name}")
        kind = getattr(module, "KIND", None)
        if not isinstance(kind, TreeVerdict | GuardVerdict):
            raise VerdictDeclarationError(
                f"{module.__name__} declares no verdict: a module here holds one, as KIND "
                "(a TreeVerdict or a GuardVerdict)"
            )
        if kind.verdict != info.name:
            raise VerdictDeclarationError(
                f"{module.__name__} declares {kind.verdict!r}: a verdict's module is named "
                "for its id"
            )
        kinds.append(kind)
    return tuple(sorted(kinds, key=lambda k: k.listed))


def _refuse(kind: VerdictKind, what: str) -> NoReturn:
    raise VerdictDeclarationError(f"the verdict {kind.verdict!r} {what}")


def _checked(kinds: tuple[VerdictKind, ...]) -> tuple[VerdictKind, ...]:
    """``kinds``, once every verdict fills every part and none clashes with another."""
    texts: dict[str, Check] = {}
    for kind in kinds:
        if not _ID.fullmatch(kind.verdict):
            _refuse(kind, "is not an id of lower-case words joined by '_'")
        if not (kind.title and kind.meaning and kind.checks):
            _refuse(kind, "needs a title, a meaning and at least one check")
        for checks in (kind.checks, kind.fiber_checks or ()):
            first = [not c.stops_harm for c in checks]
            if first != sorted(first):  # common practice of on-call work
                _refuse(kind, "declares a check that stops harm after one that does not")
        for check in (*kind.checks, *(kind.fiber_checks or ())):
            if texts.setdefault(check.text, check) != check:
                _refuse(
                    kind,
                    f"words a check as another verdict does, touching otherwise: {check.text!r}",
                )
        if isinstance(kind, TreeVerdict):
            if not kind.needs or not all(n.needs and n.source for n in kind.needs):
                _refuse(kind, "needs at least one condition of the physics, each with its source")
            if not kind.phrases:
                _refuse(kind, "needs the phrases of the trade that name it in a reply")
            if not kind.prior_share > 0:
                _refuse(kind, "needs a share of the simulated prior")
            if kind.severity is not None and kind.demo is None:
                _refuse(kind, "is a fault and needs a port planted in the demo network")
        elif isinstance(kind, GuardVerdict):
            if not kind.not_judged:
                _refuse(kind, "needs the words a list of suspects says it in")
            if kind.demo is None:
                _refuse(kind, "is answered before the tree and needs a port planted in the demo")
    for what, values in (
        ("listed", [k.listed for k in kinds]),
        ("precedence", [k.precedence for k in kinds if isinstance(k, GuardVerdict)]),
        (
            "link judge order",
            [k.link.order for k in kinds if isinstance(k, TreeVerdict) and k.link],
        ),
        ("demo port", [(k.demo.device, k.demo.port) for k in kinds if k.demo is not None]),
    ):
        twice = [value for value, n in Counter(values).items() if n > 1]
        if twice:
            raise VerdictDeclarationError(f"two verdicts share the {what} {twice[0]!r}")
    if not any(isinstance(k, TreeVerdict) and k.severity is None for k in kinds):
        raise VerdictDeclarationError("no verdict the tree answers stands for a healthy port")
    return kinds


#: Every verdict, in the order of the snapshot format's table.
KINDS: tuple[VerdictKind, ...] = _checked(_gathered())
#: The verdicts the tree answers, and those answered before it.
TREE: tuple[TreeVerdict, ...] = tuple(k for k in KINDS if isinstance(k, TreeVerdict))
GUARDS: tuple[GuardVerdict, ...] = tuple(k for k in KINDS if isinstance(k, GuardVerdict))
VERDICTS: tuple[Verdict, ...] = tuple(k.verdict for k in KINDS)
TREE_VERDICTS: tuple[Verdict, ...] = tuple(k.verdict for k in TREE)
GUARD_VERDICTS: tuple[Verdict, ...] = tuple(k.verdict for k in GUARDS)
#: Verdicts that mean something on the link needs a person's attention, and how urgently
#: (a link that corrupts or loses traffic ranks above one that is slow or full).
SEVERITY: dict[Verdict, int] = {
    **{k.verdict: k.severity for k in TREE if k.severity is not None},
    **{k.verdict: k.severity for k in GUARDS if k.severity is not None},
}
FAULTS: frozenset[Verdict] = frozenset(SEVERITY)
#: The verdicts answered before the tree that say nothing of the port's health (down, shut
#: on purpose, too quiet, unread): counted apart, neither suspect nor healthy.
NOT_JUDGED: frozenset[Verdict] = frozenset(k.verdict for k in GUARDS if k.severity is None)
#: The verdicts answered before the tree, by id.
GUARD_KINDS: dict[Verdict, GuardVerdict] = {k.verdict: k for k in GUARDS}
_BY_ID: dict[str, VerdictKind] = {k.verdict: k for k in KINDS}


def kind_of(verdict: str) -> VerdictKind:
    """The declaration of a verdict, by its id; a ValueError for an id no module declares."""
    kind = _BY_ID.get(verdict)
    if kind is None:
        raise ValueError(f"{verdict!r} is not a verdict of the snapshot format")
    return kind


def known(verdict: str) -> Verdict:
    """``verdict`` as an id of the format; a ValueError where no module declares it."""
    return kind_of(verdict).verdict


#: Every check by its words, to find what a check in a record involves.
_CHECKS: dict[str, Check] = {c.text: c for k in KINDS for c in (*k.checks, *(k.fiber_checks or ()))}
_CAUTION_TEXTS = frozenset(c.value for c in Caution)


def cautions_for(checks: list[str], port_cautions: list[str]) -> list[Caution]:
    """The cautions of ``port_cautions`` (a record's, for its port) that the given
    ``checks`` call for: what must be read before doing them, not behind a click."""
    touches = frozenset().union(*(_CHECKS[c].touches for c in checks if c in _CHECKS))
    chosen = [
        Caution(c)
        for c in port_cautions
        if c in _CAUTION_TEXTS and touches & NEEDS.get(Caution(c), frozenset())
    ]
    return [*chosen, Caution.LOCAL_CODES] if chosen else []
