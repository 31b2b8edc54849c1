"""``scorecard score``: apply a model file to a data file and write the scored rows."""

from __future__ import annotations

from pathlib import Path
from typing import NamedTuple

import pandas as pd

from .atomic import atomic_path
from .data import read_frame
from .errors import InputError
from .model import Scorecard, load_scorecard
from .scoring import apply_scorecard, bad_probability, reasons as reason_codes


class ScoringSummary(NamedTuple):
    rows: int
    rejected: int
    unusual: dict            # characteristic -> UnusualValues
    out: Path

    def text(self) -> str:
        lines = [f"scored {self.rows} rows into {self.out}" +
                 (f"; {self.rejected} refused" if self.rejected else "")]
        for name, u in self.unusual.items():
            parts = [f"{n.replace('_', ' ')} {v}" for n, v in u._asdict().items() if v]
            if parts:
                lines.append(f"  {name}: " + ", ".join(parts))
        return "\n".join(lines)


def scored_frame(card: Scorecard, frame: pd.DataFrame, keep=(), n_reasons: int = 4):
    """The scored rows of ``frame`` as DESIGN.md's scored file columns, and the raw scores."""
    absent = [k for k in keep if k not in frame.columns]
    if absent:
        raise InputError(f"--keep {absent[0]}: no such column in the data")
    s = apply_scorecard(card, frame)
    out = {k: frame[k].to_numpy() for k in keep}
    score = pd.array(s.score, dtype="Int64")
    prob = pd.array(bad_probability(card, s.score), dtype="Float64")
    if s.rejected.any():
        score[s.rejected] = pd.NA
        prob[s.rejected] = pd.NA
    out["score"] = score
    out["bad_probability"] = prob
    for j, c in enumerate(card.characteristics):
        out[f"points_{c.name}"] = s.points[:, j]
    if n_reasons:
        codes = reason_codes(card, s.points, n_reasons)
        for i in range(n_reasons):
            out[f"reason_{i + 1}"] = codes[:, i]
    return pd.DataFrame(out), s


def write_frame(frame: pd.DataFrame, path: Path) -> None:
    """Write CSV or Parquet (by suffix) atomically."""
    suffix = path.suffix.lower()
    if suffix not in (".csv", ".parquet", ".pq"):
        raise InputError(f"{path}: --out must end in .csv or .parquet")
    with atomic_path(path) as tmp:
        if suffix == ".csv":
            frame.to_csv(tmp, index=False)
        else:
            frame.to_parquet(tmp, index=False)


def score_file(model, data, out, keep=(), reasons: int = 4) -> ScoringSummary:
    """Score every row of ``data`` with the model file ``model`` and write ``out``."""
    card = load_scorecard(model)
    frame = read_frame(data)
    scored, s = scored_frame(card, frame, keep, reasons)
    out = Path(out)
    write_frame(scored, out)
    return ScoringSummary(len(frame), int(s.rejected.sum()), s.unusual, out)
