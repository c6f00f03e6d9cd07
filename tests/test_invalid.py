"""What was wrong, in the product's words: which field, what was expected, what was found;
never the validating library's own phrasing."""

from __future__ import annotations

import tomllib
from datetime import datetime
from typing import Annotated, Literal

import pytest
from pydantic import AwareDatetime, BaseModel, ConfigDict, Field, ValidationError, field_validator

from linktriage.invalid import not_toml, problems

#: Phrases of pydantic's own messages that must never reach a person.
LIBRARY_WORDS = ("Input should", "Field required", "Value error", "Extra inputs", "Invalid JSON",
                 "String should", "expected ident", "unable to")  # fmt: skip


class Line(BaseModel):
    model_config = ConfigDict(extra="forbid")

    port: str
    speed_bps: Annotated[int, Field(ge=0)] = 0
    share: Annotated[float, Field(le=1.0)] = 0.0
    duplex: Literal["full", "half"] = "full"
    time: AwareDatetime | None = None
    when: datetime | None = None
    poe: bool = False
    lanes: list[int] = Field(default_factory=list)

    @field_validator("port")
    @classmethod
    def _named(cls, port: str) -> str:
        if not port:
            raise ValueError("a port needs a name")
        return port


def said(**fields: object) -> list[str]:
    with pytest.raises(ValidationError) as caught:
        Line.model_validate(fields)
    return problems(caught.value)


@pytest.mark.parametrize(
    ("fields", "expected"),
    [
        ({}, "port: required, but missing"),
        ({"port": "p1", "colour": "teal"}, "colour: not known here (a misspelt name?)"),
        ({"port": "p1", "speed_bps": -5}, "speed_bps: expected 0 or more, got -5"),
        ({"port": "p1", "speed_bps": 1.5}, "speed_bps: expected a whole number, got 1.5"),
        ({"port": "p1", "speed_bps": "fast"}, "speed_bps: expected a whole number, got 'fast'"),
        ({"port": "p1", "share": 2.0}, "share: expected at most 1.0, got 2.0"),
        ({"port": "p1", "duplex": "auto"}, "duplex: expected 'full' or 'half', got 'auto'"),
        ({"port": "p1", "poe": "maybe"}, "poe: expected true or false, got 'maybe'"),
        ({"port": 5}, "port: expected text, got 5"),
        ({"port": ""}, "port: a port needs a name"),
        ({"port": "p1", "lanes": [1, "x"]}, "lanes.1: expected a whole number, got 'x'"),
        ({"port": "p1", "lanes": {"a": 1}}, "lanes: expected a list, got an object"),
        (
            {"port": "p1", "time": "2026-03-02T08:00:00"},
            "time: expected a time with its zone (Z, or an offset such as +01:00), got "
            "'2026-03-02T08:00:00'",  # RFC 3339 section 5.6: a time carries Z or an offset
        ),
        (
            {"port": "p1", "when": "yesterday"},
            "when: expected an RFC 3339 time such as 2026-03-02T08:00:00Z, got 'yesterday'",
        ),
    ],
)
def test_each_problem_names_its_field_and_what_was_expected(
    fields: dict[str, object], expected: str
) -> None:
    found = said(**fields)
    assert found == [expected]
    assert not any(word in found[0] for word in LIBRARY_WORDS)


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        ('{"port": "p1", ', "not valid JSON: it ends before its value is complete"),
        ('{"port": p1}', "not valid JSON at character 10 of 12"),
        ("[1, 2]", "expected an object, got a list"),
    ],
)
def test_a_line_that_is_not_a_json_object_says_where_it_stops(text: str, expected: str) -> None:
    with pytest.raises(ValidationError) as caught:
        Line.model_validate_json(text)
    assert problems(caught.value) == [expected]


def test_a_toml_file_that_does_not_parse_says_where() -> None:
    with pytest.raises(tomllib.TOMLDecodeError) as caught:
        tomllib.loads("[store]\nurl = \n")
    assert not_toml(caught.value) == "not valid TOML at line 2, column 7"
