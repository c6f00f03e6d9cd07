"""The model card: what a model is, how it was chosen and how well it scored, in a few lines."""

from __future__ import annotations

from typing import Any

from linktriage.engine.measure.measures import RESOLUTION_CAP, RESOLUTION_TIMES_OBJECTIVE
from linktriage.engine.measure.numbers import format_ratio, ratio_scale, sig
from linktriage.engine.model.artefact import TreeArtefact
from linktriage.engine.model.impurity import feature_importances
from linktriage.render.words import utc_minute


def importances(artefact: TreeArtefact) -> dict[str, float]:
    """Each feature's share of the impurity the tree's questions remove."""
    values = feature_importances(artefact.tree, len(artefact.features))
    return {f: round(float(v), 4) for f, v in zip(artefact.features, values, strict=True)}


def model_card_data(
    artefact: TreeArtefact, *, source: str, trained_at: float | None = None
) -> dict[str, Any]:
    """The card as plain data (``linktriage model --json``): everything but the tree arrays."""
    return {
        "version": artefact.version,
        "source": source,
        "trained_at": trained_at,
        "leaves": artefact.leaves,
        "depth": artefact.depth,
        "criterion": "gini",
        "features": artefact.features,
        "classes": artefact.classes,
        "feature_importances": importances(artefact),
        "training": artefact.training.model_dump(),
    }


def _when(at: float | None) -> str:
    if at is None:
        return "before packaging"
    return utc_minute(at)


def card_text(card: dict[str, Any]) -> str:
    """The card (``model_card_data``) as text for a terminal."""
    t = card["training"]
    recall = ", ".join(f"{c} {r:.3f}" for c, r in sorted(t["per_class_recall"].items()))
    top = sorted(card["feature_importances"].items(), key=lambda kv: -kv[1])
    important = ", ".join(f"{name} {value:.2f}" for name, value in top if value >= 0.01)
    return "\n".join(
        [
            f"model {card['version']} ({card['source']}), trained {_when(card['trained_at'])}",
            f"  tree: {card['leaves']} leaves, depth {card['depth']}, Gini impurity, "
            f"ccp_alpha {t['ccp_alpha']:.3g}",
            f"  pruning: {t['selection']}",
            f"  trained on {t['rows']:,} rows from {t['simulated_ports']:,} simulated ports "
            f"(seed {t['seed']}) and {t['labelled_rows']:,} labels from what engineers found",
            f"  cross-validated macro-F1 {t['cv_macro_f1']:.3f} +/- {t['cv_macro_f1_se']:.3f} "
            f"({t['folds']} folds; best {t['best_cv_macro_f1']:.3f} "
            f"at ccp_alpha {t['best_ccp_alpha']:.3g})",
            f"  healthy ports the tree alone calls faulty (cross-validated, before the physics "
            f"rules and guards): {sig(t['healthy_false_alarm'] * 100)}%",
            f"  recall per class: {recall}",
            f"  features that matter: {important}",
            f"  guards: a clean port is judged once its frames bound the error ratio at "
            f"{RESOLUTION_TIMES_OBJECTIVE:g} times the PHY's objective, or at "
            f"{format_ratio(RESOLUTION_CAP, ratio_scale(RESOLUTION_CAP))} if that is less",
            *_reliability(t["reliability"]),
            f"  scikit-learn {t['sklearn_version']}",
        ]
    )


def _reliability(bins: list[dict[str, Any]]) -> list[str]:
    """How often each level of confidence was right, on held-out simulated ports."""
    if not bins:
        return ["  confidence: its reliability was not measured for this model"]
    cells = [
        f"{b['low']:.2f}-{b['high']:.2f}: {b['answers']:,} answers, "
        f"{100 * b['right'] / b['answers']:.1f}% right"
        for b in bins
        if b["answers"]
    ]
    total = sum(b["answers"] for b in bins)
    return [
        f"  confidence on {total:,} tree answers of held-out simulated ports: " + "; ".join(cells)
    ]
