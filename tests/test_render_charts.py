"""The pictures: decoded as PNGs, large enough to read on a phone, the path and the
objective drawn, and nothing drawn for an answer the tree never gave."""

from __future__ import annotations

import dataclasses
import io

import pytest
from PIL import Image

from linktriage.bot.history import verdict_runs
from linktriage.bot.triage import Triage
from linktriage.engine.simulate.ports import DEFAULT_START
from linktriage.network.demo import DemoClock
from linktriage.render.charts import history_png, pictures_for, tree_png
from linktriage.render.replies import HistoryReply, TreeReply

#: Slack shows a picture in a thread at up to about 360 points wide on a phone; narrower
#: than 400 pixels and it is drawn upscaled and blurred.
MIN_WIDTH = 400
PATH_ORANGE = (0xD5, 0x5E, 0x00)


def decoded(data: bytes) -> Image.Image:
    image = Image.open(io.BytesIO(data))
    assert image.format == "PNG"
    image.load()  # every pixel decoded: a truncated file fails here
    return image.convert("RGB")


def pixels_of(image: Image.Image, colour: tuple[int, int, int]) -> int:
    found = image.getcolors(maxcolors=image.width * image.height) or []
    return sum(count for count, pixel in found if pixel == colour)


@pytest.fixture
def history(triage: Triage, clock: DemoClock) -> HistoryReply:
    clock.now = DEFAULT_START - 3 * 3600.0
    for _ in range(37):
        triage.poller.poll_round()
        clock.sleep(300.0)
    clock.now = DEFAULT_START
    reply = triage.handle("history lark-east-idf2 port14 3h")
    assert isinstance(reply, HistoryReply)
    return reply


def test_a_history_chart_is_a_png_large_enough_for_a_phone(history: HistoryReply) -> None:
    image = decoded(history_png(history))
    assert image.width >= MIN_WIDTH and image.height >= image.width  # upright, like a phone
    (picture,) = pictures_for(history)
    assert picture.filename == "history-lark-east-idf2-port14.png"
    assert "cable_fault since 05:40 UTC, healthy before" in picture.alt


def test_a_short_history_draws_the_same_size(history: HistoryReply) -> None:
    last = history.points[-1:]
    short = dataclasses.replace(history, points=last, runs=verdict_runs(last))
    assert decoded(history_png(short)).size == decoded(history_png(history)).size


def test_the_tree_picture_marks_the_path_in_its_own_colour(triage: Triage) -> None:
    tree = triage.handle("tree lark-east-idf2 port14")
    assert isinstance(tree, TreeReply)
    image = decoded(tree_png(tree))
    assert image.width >= MIN_WIDTH
    assert pixels_of(image, PATH_ORANGE) > 2000  # thick path edges and square nodes
    (picture,) = pictures_for(tree)
    assert picture.filename == "tree-lark-east-idf2-port14.png"
    assert picture.alt.endswith("questions leading to cable_fault.")


def test_a_guards_answer_has_no_tree_to_draw(triage: Triage) -> None:
    down = triage.handle("tree lark-west-idf1 port9")
    assert isinstance(down, TreeReply) and down.node == -1
    assert pictures_for(down) == []
    assert pictures_for(triage.handle("help")) == []
