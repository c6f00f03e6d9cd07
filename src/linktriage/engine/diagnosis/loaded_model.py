"""A model loaded for diagnosis: the tree's artefact, its compiled arrays, the wording of its
questions, and where it was loaded from (a file, the registry's current one, the package)."""

from __future__ import annotations

from pathlib import Path

import numpy as np

from linktriage.engine.model.artefact import CompiledTree, TreeArtefact
from linktriage.engine.model.explain import Explainer
from linktriage.engine.model.features import FEATURE_NAMES
from linktriage.engine.model.nearest import Counterfactuals
from linktriage.engine.verdicts import TREE_VERDICTS
from linktriage.errors import ModelError


class Model:
    """A loaded model: the artefact, its compiled arrays and the question wording."""

    def __init__(
        self,
        artefact: TreeArtefact,
        *,
        source: str = "the packaged default model",
        trained_at: float | None = None,
    ) -> None:
        if tuple(artefact.features) != FEATURE_NAMES:
            raise ModelError(
                f"{source} was trained on other inputs than this release computes",
                hint="Rebuild it with `linktriage train`.",
            )
        unknown = [c for c in artefact.classes if c not in TREE_VERDICTS]
        if unknown:
            raise ModelError(
                f"{source} answers verdicts this release does not know: {', '.join(unknown)}",
                hint="Rebuild it with `linktriage train`.",
            )
        self.artefact = artefact
        self.source = source  # where it was loaded from, for the model card
        self.trained_at = trained_at  # None for the packaged model
        self.tree = CompiledTree(artefact)
        self.explainer = Explainer(self.tree)
        self.counterfactuals = Counterfactuals(self.tree)
        # Column j of the physics mask (TREE_VERDICTS order) for each class of the tree.
        self.class_columns = np.array([TREE_VERDICTS.index(c) for c in artefact.classes], np.intp)

    @property
    def version(self) -> str:
        return self.artefact.version

    @classmethod
    def load(cls, path: str | Path | None = None) -> Model:
        """The model at ``path``; else the current one of the data directory's registry
        (``linktriage train``, ``linktriage model --use``); else the packaged one. A kept
        model an earlier release built is passed over for the packaged one, and the card
        says so."""
        from linktriage.engine.model.registry import Registry

        if path is not None:
            return cls(TreeArtefact.load(path), source=str(path))
        try:
            kept = Registry().current()
            if kept is not None:
                artefact, entry = kept
                return cls(artefact, source="the current kept model", trained_at=entry.trained_at)
        except ModelError as exc:
            return cls(
                TreeArtefact.default(),
                source=f"the packaged default model (the kept one is unusable: {exc.message})",
            )
        return cls(TreeArtefact.default())
