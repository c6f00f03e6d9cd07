"""What was wrong with a file, a line or a setting, in our own words: which field, what it
should have been, and what was found. pydantic's checks find the problems; these words say
them, so that no message ever shows a library's phrasing ("Value error, ...")."""

from __future__ import annotations

import json
import re
from typing import Any

from pydantic import ValidationError
from pydantic_core import ErrorDetails

#: An RFC 3339 time as the snapshot format and the settings write it.
_TIME_EXAMPLE = "2026-03-02T08:00:00Z"


def problems(exc: ValidationError) -> list[str]:
    """Every problem pydantic found, one sentence each: ``field: what was expected``."""
    return [problem(error) for error in exc.errors(include_url=False)]


def problem(error: ErrorDetails) -> str:
    """One problem, led by the field it is in (dotted, list positions counted from 0)."""
    where = ".".join(str(part) for part in error["loc"])
    said = _expected(error)
    return f"{where}: {said}" if where else said


def shown(value: Any) -> str:
    """A value as found, short: strings quoted, objects and lists named as such."""
    if isinstance(value, dict):
        return "an object"
    if isinstance(value, list | tuple):
        return "a list"
    text = repr(value)
    return text if len(text) <= 40 else text[:37] + "..."


def _expected(error: ErrorDetails) -> str:
    kind, ctx = error["type"], error.get("ctx", {})
    got = f", got {shown(error['input'])}"
    match kind:
        case "missing":
            return "required, but missing"
        case "extra_forbidden":
            return "not known here (a misspelt name?)"
        case "literal_error" | "enum":
            return f"expected {ctx.get('expected', 'one of the listed values')}{got}"
        case "int_parsing" | "int_type" | "int_from_float":
            return f"expected a whole number{got}"
        case "float_parsing" | "float_type" | "finite_number":
            return f"expected a number{got}"
        case "bool_parsing" | "bool_type":
            return f"expected true or false{got}"
        case "string_type":
            return f"expected text{got}"
        case "greater_than_equal":
            return f"expected {ctx['ge']} or more{got}"
        case "greater_than":
            return f"expected more than {ctx['gt']}{got}"
        case "less_than_equal":
            return f"expected at most {ctx['le']}{got}"
        case "less_than":
            return f"expected less than {ctx['lt']}{got}"
        case "too_short":
            return f"expected at least {ctx['min_length']} items{got}"
        case "too_long":
            return f"expected at most {ctx['max_length']} items{got}"
        case "timezone_aware":
            return f"expected a time with its zone (Z, or an offset such as +01:00){got}"
        case "datetime_parsing" | "datetime_type" | "datetime_from_date_parsing":
            return f"expected an RFC 3339 time such as {_TIME_EXAMPLE}{got}"
        case "model_type" | "dict_type" | "model_attributes_type":
            return f"expected an object{got}"
        case "list_type" | "tuple_type":
            return f"expected a list{got}"
        case "string_pattern_mismatch":
            return f"not in the form expected here{got}"
        case "json_invalid":
            return _not_json(error["input"])
        case "value_error" | "assertion_error":
            return str(ctx.get("error", "not allowed here"))
        case _:
            return f"not allowed here{got}"


def not_toml(exc: ValueError) -> str:
    """Where a TOML file stops being TOML (tomllib says it in brackets at the end)."""
    at = re.search(r"\(at line (\d+), column (\d+)\)", str(exc))
    if at:
        return f"not valid TOML at line {at[1]}, column {at[2]}"
    return "not valid TOML: it ends before its last value is complete"


def _not_json(text: Any) -> str:
    """Where a line stops being JSON: at its end (cut short), or at a character."""
    if not isinstance(text, str | bytes):
        return "not valid JSON"
    try:
        json.loads(text)
    except json.JSONDecodeError as exc:
        if exc.pos >= len(text.rstrip()):
            return "not valid JSON: it ends before its value is complete"
        return f"not valid JSON at character {exc.pos + 1} of {len(text.rstrip())}"
    except UnicodeDecodeError:
        return "not valid JSON: not UTF-8 text"
    return "not valid JSON"
