"""Read and validate round.toml into a frozen :class:`RoundConfig`, reporting every problem."""

from __future__ import annotations

import datetime as dt
import re
import tomllib
from pathlib import Path

from pydantic import ValidationError

from reportgen.errors import InputError, Problem
from reportgen.rounds.schema import RoundConfig

ROUND_FILE = "round.toml"
MAX_ROUND_FILE_BYTES = 1 << 20
"""round.toml is a page of settings; anything larger is not one (and is refused unread)."""
LOGO_SUFFIXES = (".png", ".jpg", ".jpeg", ".svg", ".gif")


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
        shown = (None if err["type"] == "missing" or isinstance(value, dict | list | tuple)
                 else value if isinstance(value, str)
                 else value.isoformat() if isinstance(value, dt.date | dt.time)
                 else repr(value))
        problems.append(Problem(file=ROUND_FILE, column=key, message=msg, value=shown))
    return problems


def load_config(folder: Path, known_metrics: frozenset[str]) -> RoundConfig:
    """Parse ``folder/round.toml``; raise :class:`InputError` listing every problem found."""
    text = _read_text(folder / ROUND_FILE, folder)
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise InputError([_toml_syntax_problem(exc)]) from exc
    except RecursionError as exc:  # tomllib recurses once per level of nested arrays/tables
        raise InputError.single(ROUND_FILE, "TOML syntax error: arrays or tables are nested "
                                "too deeply to be round settings") from exc
    # The checks that need more than the schema run on the raw table too, so that one wrong
    # setting never hides another (a bad accent colour and a bad logo are reported together).
    extra = _unknown_metrics(data, known_metrics) + _raw_logo_problem(folder, data)
    try:
        config = RoundConfig.model_validate(data)
    except ValidationError as exc:
        raise InputError(_validation_problems(exc) + extra) from exc
    if extra:
        raise InputError(extra)
    return config


def _unknown_metrics(data: dict[str, object], known_metrics: frozenset[str]) -> list[Problem]:
    criteria = data.get("criteria")
    if not isinstance(criteria, list):
        return []
    return [
        Problem(
            file=ROUND_FILE,
            column=f"criteria.{n}.metric",
            value=c["metric"],
            message=f"criterion {c.get('id')!r} names an unknown metric",
            allowed=", ".join(sorted(known_metrics)),
        )
        for n, c in enumerate(criteria)
        if isinstance(c, dict) and isinstance(c.get("metric"), str)
        and c["metric"] not in known_metrics
    ]


def _raw_logo_problem(folder: Path, data: dict[str, object]) -> list[Problem]:
    provider = data.get("provider")
    logo = provider.get("logo") if isinstance(provider, dict) else None
    if not isinstance(logo, str) or any(ord(ch) < 32 for ch in logo):
        return []  # absent, or a type / control-character problem the schema reports
    return _logo_problem(folder, logo)


def _read_text(path: Path, folder: Path) -> str:
    try:
        with path.open("rb") as fh:
            data = fh.read(MAX_ROUND_FILE_BYTES + 1)
    except FileNotFoundError as exc:
        raise InputError.single(ROUND_FILE,
                                f"no {ROUND_FILE} in the round folder {folder}") from exc
    except IsADirectoryError as exc:
        raise InputError.single(ROUND_FILE, "is a folder, not a file") from exc
    except OSError as exc:
        raise InputError.single(ROUND_FILE, f"cannot be read: {exc.strerror}") from exc
    if len(data) > MAX_ROUND_FILE_BYTES:
        raise InputError.single(ROUND_FILE, f"is larger than {MAX_ROUND_FILE_BYTES // 1024:,} "
                                "KiB, so it is not a round's settings file")
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        line = data[: exc.start].count(b"\n") + 1
        raise InputError.single(ROUND_FILE, f"is not UTF-8 text (line {line}); save it as "
                                "UTF-8") from exc


def _logo_problem(folder: Path, logo: str | None) -> list[Problem]:
    """The provider logo must be an image file inside the round folder (checked before anything
    is rendered, so a bad path is refused with the other input problems)."""
    if not logo:
        return []
    try:
        path = (folder / logo).resolve()
        usable = path.is_relative_to(folder.resolve()) and path.suffix.lower() in LOGO_SUFFIXES
        present = usable and path.is_file()
    except (OSError, ValueError, RuntimeError):  # a name too long, or a symlink loop
        usable = present = False
    if usable and present:
        return []
    message = ("the provider logo file is not in the round folder" if usable else
               "the provider logo must be a .png, .jpg, .svg or .gif file inside the round "
               "folder")
    return [Problem(file=ROUND_FILE, column="provider.logo", value=logo, message=message)]
