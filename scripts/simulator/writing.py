"""Writing simulated rounds as round folders (round.toml, csv files, csv or xlsx responses)."""

from __future__ import annotations

from pathlib import Path

import pandas as pd

from scripts.simulator.rounds import SimulatedRound, sample_rounds
from scripts.simulator.scenario import SAMPLE_LAYOUTS, SAMPLE_SEED, Layout, ResponsesFormat
from scripts.simulator.toml_text import round_toml
from scripts.simulator.xlsx import xlsx_bytes


def _csv_bytes(table: pd.DataFrame) -> bytes:
    text = table.to_csv(index=False, lineterminator="\n")
    return text.encode("utf-8")


def _write(path: Path, data: bytes) -> None:
    tmp = path.with_name(path.name + ".tmp")
    tmp.write_bytes(data)
    tmp.replace(path)


def write_round(sim: SimulatedRound, folder: Path | str, *,
                responses_format: ResponsesFormat = "csv", layout: Layout = "long") -> Path:
    """Write a round folder: round.toml, items.csv, responses.{csv,xlsx}, participants.csv,
    estimates.csv. A responses file of the other format left from an earlier run is removed."""
    if responses_format not in ("csv", "xlsx"):
        raise ValueError(f"responses_format must be 'csv' or 'xlsx', not {responses_format!r}")
    if layout not in ("long", "wide"):
        raise ValueError(f"layout must be 'long' or 'wide', not {layout!r}")
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    _write(folder / "round.toml", round_toml(sim.meta, layout=layout).encode("utf-8"))
    _write(folder / "items.csv", _csv_bytes(sim.items))
    responses = sim.wide_responses() if layout == "wide" else sim.responses
    other = "xlsx" if responses_format == "csv" else "csv"
    (folder / f"responses.{other}").unlink(missing_ok=True)
    if responses_format == "csv":
        _write(folder / "responses.csv", _csv_bytes(responses))
    else:
        _write(folder / "responses.xlsx", xlsx_bytes(responses, sim.meta.issued))
    _write(folder / "participants.csv", _csv_bytes(sim.participants))
    _write(folder / "estimates.csv", _csv_bytes(sim.estimates))
    return folder


def write_sample_rounds(dest: Path | str, seed: int = SAMPLE_SEED) -> list[Path]:
    """Regenerate the sample rounds into ``dest/fic-2024`` ... ``dest/fic-2026``."""
    dest = Path(dest)
    written = []
    for year, sim in sample_rounds(seed).items():
        fmt, layout = SAMPLE_LAYOUTS[year]
        written.append(write_round(sim, dest / f"fic-{year}", responses_format=fmt,
                                   layout=layout))
    return written
