"""The built scorecard: one plain object that every output reads.

A :class:`Scorecard` holds, for each characteristic in the model, its bins with their rules,
development counts, weight of evidence and points, plus the coefficients and the scaling. It is
saved as JSON (``format_version`` 1) and holds everything needed to score a row without the
config or the data. The workbook, scoring, stability reports and exports read this object only.
"""

from __future__ import annotations

import json
import math
from dataclasses import asdict, dataclass, field
from pathlib import Path

from scorecard.card.points import Scaling
from scorecard.errors import InputError

FORMAT_VERSION = 1

# Kinds of bin. A numeric characteristic has its value ranges first (in ascending order), then
# missing and special values; a categorical one has its groups of levels first.
RANGE, MISSING, SPECIAL, LEVELS, UNSEEN, OUT_OF_RANGE = (
    "range", "missing", "special", "levels", "unseen", "out of range")
BIN_KINDS = (RANGE, MISSING, SPECIAL, LEVELS, UNSEEN, OUT_OF_RANGE)


@dataclass(frozen=True)
class Bin:
    """One attribute of a characteristic: its rule, development counts, WoE and points.

    ``lower`` (inclusive) and ``upper`` (exclusive) bound a range bin (None is unbounded);
    ``value`` is a special value; ``levels`` are the categorical levels of a group.
    ``rejected`` marks a bin whose rows the scorecard refuses to score (config choice).
    """

    label: str
    kind: str
    goods: float
    bads: float
    woe: float
    points: int
    lower: float | None = None
    upper: float | None = None
    value: float | None = None
    levels: tuple[str, ...] = ()
    rejected: bool = False
    note: str = ""

    @property
    def count(self) -> float:
        return self.goods + self.bads


@dataclass(frozen=True)
class Characteristic:
    """A characteristic in the model: ``cuts`` split the numeric range bins."""

    name: str
    kind: str                      # 'numeric' | 'categorical'
    bins: tuple[Bin, ...]
    coefficient: float
    reason_code: str
    reason: str
    cuts: tuple[float, ...] = ()
    special_values: tuple[float, ...] = ()
    development_range: tuple[float, float] | None = None
    information_value: float = 0.0

    @property
    def max_points(self) -> int:
        return max(b.points for b in self.bins if not b.rejected and b.count > 0)

    def bin_index(self, kind: str) -> int | None:
        """Index of the first bin of ``kind`` (missing, unseen, out of range), or None."""
        return next((i for i, b in enumerate(self.bins) if b.kind == kind), None)

    def frame(self):
        """The bins as a DataFrame: counts, bad rate, weight of evidence, IV part, points."""
        from scorecard.card.frames import bins_frame
        return bins_frame(self)

    def _repr_html_(self) -> str:
        head = (f"<p><b>{_html(self.name)}</b> ({self.kind}): information value "
                f"{self.information_value:.4f}, coefficient {self.coefficient:.4f}</p>")
        return head + self.frame().to_html(index=False, na_rep="", float_format="{:.4f}".format)


@dataclass(frozen=True)
class Scorecard:
    """A built scorecard.

    Examples
    --------
    >>> from scorecard.card.points import scaling
    >>> b = (Bin("< 1", RANGE, 60, 40, -0.4, 10, upper=1.0), Bin(">= 1", RANGE, 90, 10, 1.0, 30, lower=1.0),
    ...      Bin("missing", MISSING, 0, 0, 0.0, 20))
    >>> c = Characteristic("x", "numeric", b, 1.0, "R01", "x is low", cuts=(1.0,))
    >>> card = Scorecard("demo", scaling(600, 50, 20), 0.5, (c,), {"bad": ["b"], "good": ["g"]})
    >>> Scorecard.from_json(card.to_json()) == card
    True
    """

    name: str
    scaling: Scaling
    intercept: float
    characteristics: tuple[Characteristic, ...]
    target: dict = field(default_factory=dict)
    rounding_change: float = 0.0
    reasons: int = 4                 # reason codes per scored row unless the caller says otherwise
    # How declined applicants were brought into the build (method, settings, bad rates); empty
    # for a card built on accepts alone without declined applications.
    inference: dict = field(default_factory=dict)

    @property
    def names(self) -> tuple[str, ...]:
        return tuple(c.name for c in self.characteristics)

    def frame(self):
        """The points table as a DataFrame: one row per attribute of every characteristic."""
        from scorecard.card.frames import points_frame
        return points_frame(self)

    def _repr_html_(self) -> str:
        s = self.scaling
        head = (f"<p><b>{_html(self.name)}</b>: {len(self.characteristics)} characteristics, "
                f"scores {self.min_score} to {self.max_score}; {s.base_score:g} points at odds "
                f"{s.base_odds:g}:1, {s.pdo:g} points to double the odds</p>")
        return head + self.frame().to_html(index=False, na_rep="", float_format="{:.4f}".format)

    @property
    def min_score(self) -> int:
        return sum(min(b.points for b in c.bins) for c in self.characteristics)

    @property
    def max_score(self) -> int:
        return sum(max(b.points for b in c.bins) for c in self.characteristics)

    def to_dict(self) -> dict:
        return {"format_version": FORMAT_VERSION, "name": self.name,
                "scaling": self.scaling._asdict(), "intercept": self.intercept,
                "rounding_change": self.rounding_change, "reasons": self.reasons,
                "target": self.target,
                "characteristics": [_characteristic_dict(c) for c in self.characteristics],
                **({"reject_inference": self.inference} if self.inference else {})}

    def to_json(self) -> str:
        return json.dumps(self.to_dict(), indent=1, sort_keys=False, allow_nan=False) + "\n"

    @classmethod
    def from_json(cls, text: str, source: str = "model") -> "Scorecard":
        try:
            raw = json.loads(text)
        except json.JSONDecodeError as exc:
            raise InputError(f"{source}: not a model file: invalid JSON at line {exc.lineno}") from None
        return _scorecard_from_dict(raw, source)


def _html(text: str) -> str:
    import html
    return html.escape(str(text))


def load_scorecard(path) -> Scorecard:
    """Read a model file written by ``scorecard build``; InputError if it is not one."""
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError) as exc:
        raise InputError(f"{path}: cannot read the model file ({exc.__class__.__name__})") from None
    return Scorecard.from_json(text, str(path))


def _characteristic_dict(c: Characteristic) -> dict:
    out = asdict(c)
    out["bins"] = [{k: v for k, v in asdict(b).items() if v not in (None, (), "", False)
                    or k in ("goods", "bads", "woe", "points")} for b in c.bins]
    return out


def _scorecard_from_dict(raw, source: str) -> Scorecard:
    if not isinstance(raw, dict):
        raise InputError(f"{source}: not a model file: expected a JSON object")
    version = raw.get("format_version")
    if version != FORMAT_VERSION:
        raise InputError(f"{source}: format_version {version!r} is not supported "
                         f"(this version reads {FORMAT_VERSION})")
    try:
        scale = Scaling(**{k: _number(v, f"scaling.{k}") for k, v in raw["scaling"].items()})
        chars = tuple(_characteristic_from_dict(c) for c in raw["characteristics"])
        card = Scorecard(str(raw["name"]), scale, float(raw["intercept"]), chars,
                         dict(raw.get("target", {})), float(raw.get("rounding_change", 0.0)),
                         _count(raw.get("reasons", 4), "reasons"),
                         dict(raw.get("reject_inference", {})))
    except (KeyError, TypeError, ValueError) as exc:
        raise InputError(f"{source}: model file is incomplete or malformed ({exc})") from None
    _check_consistent(card, source)
    return card


def _number(value, key: str) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise ValueError(f"{key} must be a number, not {value!r}")
    return float(value)


def _count(value, key: str) -> int:
    if isinstance(value, bool) or not isinstance(value, int) or value < 0:
        raise ValueError(f"{key} must be a whole number >= 0, not {value!r}")
    return value


def _levels(value) -> tuple[str, ...]:
    if not isinstance(value, list) or not all(isinstance(v, str) for v in value):
        raise ValueError(f"levels must be a list of texts, not {value!r}")
    return tuple(value)


def _bin_from_dict(raw: dict) -> Bin:
    numbers = {k: _number(raw[k], f"bin {k}") for k in ("goods", "bads", "woe") if k in raw}
    bounds = {k: None if raw.get(k) is None else _number(raw[k], f"bin {k}")
              for k in ("lower", "upper", "value") if k in raw}
    return Bin(**{**raw, **numbers, **bounds, "levels": _levels(raw.get("levels", []))})


def _characteristic_from_dict(raw: dict) -> Characteristic:
    bins = tuple(_bin_from_dict(b) for b in raw["bins"])
    rng = raw.get("development_range")
    return Characteristic(
        name=str(raw["name"]), kind=str(raw["kind"]), bins=bins,
        coefficient=float(raw["coefficient"]), reason_code=str(raw["reason_code"]),
        reason=str(raw["reason"]), cuts=tuple(float(x) for x in raw.get("cuts", ())),
        special_values=tuple(float(x) for x in raw.get("special_values", ())),
        development_range=None if rng is None else (_number(rng[0], "development_range"),
                                                     _number(rng[1], "development_range")),
        information_value=float(raw.get("information_value", 0.0)))


def _check_consistent(card: Scorecard, source: str) -> None:
    """Refuse a model file edited into a state that would score wrongly."""
    s = card.scaling
    if not (s.pdo > 0 and s.base_odds > 0) or not math.isclose(s.factor, s.pdo / math.log(2)) \
            or not math.isclose(s.offset, s.base_score - s.factor * math.log(s.base_odds)):
        raise InputError(f"{source}: scaling: factor and offset do not match base_score, "
                         "base_odds and pdo")
    if not card.characteristics:
        raise InputError(f"{source}: characteristics: the model has none")
    seen = set()
    for c in card.characteristics:
        where = f"{source}: characteristics.{c.name}"
        if c.name in seen:
            raise InputError(f"{where}: listed twice")
        seen.add(c.name)
        if c.kind not in ("numeric", "categorical"):
            raise InputError(f"{where}: kind {c.kind!r} is not numeric or categorical")
        if any(b.kind not in BIN_KINDS for b in c.bins):
            raise InputError(f"{where}: a bin has an unknown kind")
        if any(not isinstance(b.points, int) or isinstance(b.points, bool) for b in c.bins):
            raise InputError(f"{where}: points must be integers")
        rng = c.development_range
        if rng is not None and not rng[0] <= rng[1]:
            raise InputError(f"{where}: development_range runs from {rng[0]:g} down to {rng[1]:g}")
        ranges = [b for b in c.bins if b.kind == RANGE]
        if c.kind == "numeric":
            if list(c.cuts) != sorted(set(c.cuts)) or len(ranges) != len(c.cuts) + 1:
                raise InputError(f"{where}: cuts must be strictly increasing with one range "
                                 "bin more than cuts")
            bounds = [(b.lower, b.upper) for b in ranges]
            expected = list(zip((None,) + c.cuts, c.cuts + (None,)))
            if bounds != expected:
                raise InputError(f"{where}: range bins do not match the cuts")
            specials = [b.value for b in c.bins if b.kind == SPECIAL]
            if specials != list(c.special_values):
                raise InputError(f"{where}: special-value bins do not match special_values")
        else:
            levels = [lv for b in c.bins for lv in b.levels]
            if len(levels) != len(set(levels)):
                raise InputError(f"{where}: a level belongs to two bins")
        for kind in (MISSING, UNSEEN, OUT_OF_RANGE):
            if sum(b.kind == kind for b in c.bins) > 1:
                raise InputError(f"{where}: more than one {kind} bin")
