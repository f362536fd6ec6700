"""Read and validate round.toml into a frozen :class:`RoundConfig`, reporting every problem."""

from __future__ import annotations

import re
import tomllib
from pathlib import Path

from pydantic import ValidationError

from reportgen.errors import InputError, Problem
from reportgen.rounds.schema import RoundConfig

ROUND_FILE = "round.toml"


def _toml_syntax_problem(exc: tomllib.TOMLDecodeError) -> Problem:
    text = str(exc)
    match = re.search(r"\(at line (\d+), column (\d+)\)", text)
    message = re.sub(r"\s*\(at line \d+, column \d+\)", "", text)
    if match:
        return Problem(
            file=ROUND_FILE,
            message=f"TOML syntax error at line {match.group(1)}, character {match.group(2)}: "
            f"{message}",
        )
    return Problem(file=ROUND_FILE, message=f"TOML syntax error: {message}")


def _validation_problems(exc: ValidationError) -> list[Problem]:
    problems = []
    for err in exc.errors():
        key = ".".join(str(p) for p in err["loc"]) or "(top level)"
        msg = err["msg"].removeprefix("Value error, ")
        if err["type"] == "extra_forbidden":
            msg = "unknown key (misspelt, or not supported)"
        elif err["type"] == "missing":
            msg = "required key is missing"
        value = err.get("input")
        shown = None if err["type"] == "missing" or isinstance(value, dict) else repr(value)
        problems.append(Problem(file=ROUND_FILE, column=key, message=msg, value=shown))
    return problems


def load_config(folder: Path, known_metrics: frozenset[str]) -> RoundConfig:
    """Parse ``folder/round.toml``; raise :class:`InputError` listing every problem found."""
    path = folder / ROUND_FILE
    try:
        text = path.read_bytes().decode("utf-8-sig")
    except FileNotFoundError as exc:
        raise InputError.single(ROUND_FILE,
                                f"no {ROUND_FILE} in the round folder {folder}") from exc
    except UnicodeDecodeError as exc:
        raise InputError.single(ROUND_FILE, "is not UTF-8 text; save it as UTF-8") from exc
    except OSError as exc:
        raise InputError.single(ROUND_FILE, f"cannot be read: {exc.strerror}") from exc
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise InputError([_toml_syntax_problem(exc)]) from exc
    try:
        config = RoundConfig.model_validate(data)
    except ValidationError as exc:
        raise InputError(_validation_problems(exc)) from exc
    unknown = [
        Problem(
            file=ROUND_FILE,
            column=f"criteria.{n}.metric",
            value=c.metric,
            message=f"criterion {c.id!r} names an unknown metric",
            allowed=", ".join(sorted(known_metrics)),
        )
        for n, c in enumerate(config.criteria)
        if c.metric not in known_metrics
    ]
    if unknown:
        raise InputError(unknown)
    return config
