"""``train`` and ``model``: building, keeping and choosing the tree."""

from __future__ import annotations

import json
from pathlib import Path

import click

from linktriage.cli import words
from linktriage.cli.options import config_option, model_option


@click.command()
@click.option(
    "--out",
    type=click.Path(dir_okay=False, path_type=Path),
    default=None,
    help="Write the artefact to this file only. Default: keep it in the data directory's "
    "registry and make it the current model.",
)
@click.option("--seed", type=int, default=None, help="Random seed (default: the packaged one).")
@click.option(
    "--ports",
    type=click.IntRange(min=2000),
    default=None,
    help="How many ports to simulate for the prior (default: as the packaged model).",
)
@click.option(
    "--with-labels",
    is_flag=True,
    help="Learn from the labels in the store too (what engineers found); promote the result "
    "only if it does no worse than the current model on labels held out.",
)
@config_option
def train(
    out: Path | None,
    seed: int | None,
    ports: int | None,
    with_labels: bool,
    config_path: Path | None,
) -> None:
    """Train the pruned tree on the simulated prior (and labels) and keep the model.

    Deterministic: the same seed, port count and labels rebuild the same tree.
    """
    import time
    from dataclasses import replace

    from linktriage.engine.diagnosis.loaded_model import Model
    from linktriage.engine.diagnosis.scoring import with_reliability
    from linktriage.engine.model.registry import Entry, Registry
    from linktriage.engine.model.train import TrainingConfig
    from linktriage.engine.model.train import train as run_training
    from linktriage.render.card import card_text, model_card_data

    cfg = TrainingConfig()
    if seed is not None:
        cfg = replace(cfg, seed=seed)
    if ports is not None:
        cfg = replace(cfg, simulated_ports=ports)
    click.echo(words.training_starts(cfg.simulated_ports, cfg.seed, cfg.folds), err=True)
    evaluation = None
    promote = True
    if with_labels:
        from linktriage.assembly import opened_store
        from linktriage.engine.model.learning import learn
        from linktriage.settings import load_settings

        with opened_store(load_settings(config_path)) as store:
            labels = store.labels()
        current = Model.load()
        outcome = learn(labels, current.artefact, cfg)
        artefact, evaluation, promote = outcome.candidate, outcome.evaluation(), outcome.promoted
        said = words.learnt(
            outcome.trained_on,
            outcome.older,
            outcome.disputed,
            outcome.held_out,
            outcome.candidate_score,
            current.version,
            outcome.current_score,
            promote,
        )
        click.echo(said, err=True)
    else:
        artefact = run_training(cfg)
    artefact = with_reliability(artefact)
    trained_at = time.time()
    if out is not None:
        out.parent.mkdir(parents=True, exist_ok=True)
        artefact.save(out)
        source = str(out)
    else:
        registry = Registry()
        entry = Entry(
            version=artefact.version,
            trained_at=trained_at,
            labelled_rows=artefact.training.labelled_rows,
            evaluation=evaluation,
        )
        registry.keep(artefact, entry, promote=promote)
        source = words.kept_model_source(promote)
    click.echo(card_text(model_card_data(artefact, source=source, trained_at=trained_at)))


@click.command()
@click.option("--json", "as_json", is_flag=True, help="The model card as JSON.")
@click.option(
    "--use",
    "use_version",
    metavar="VERSION",
    default=None,
    help="Make a kept model the current one (roll back or forward).",
)
@model_option
def model(as_json: bool, use_version: str | None, model_path: Path | None) -> None:
    """Show the model's card: version, size, pruning, scores, labels, kept versions."""
    from linktriage.engine.diagnosis.loaded_model import Model
    from linktriage.engine.model.registry import Registry
    from linktriage.render.card import card_text, model_card_data

    registry = Registry()
    if use_version is not None:
        registry.use(use_version)
    loaded = Model.load(model_path)
    card = model_card_data(loaded.artefact, source=loaded.source, trained_at=loaded.trained_at)
    card["kept_versions"] = [e.model_dump() for e in registry.versions()]
    if as_json:
        click.echo(json.dumps(card))
        return
    click.echo(card_text(card))
    for entry in card["kept_versions"]:
        current = entry["version"] == loaded.version
        click.echo(words.kept_version(entry["version"], entry["labelled_rows"], current=current))
