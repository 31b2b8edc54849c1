"""The built scorecard: one plain object that every output reads.

A :class:`Scorecard` holds, for each characteristic in the model, its bins with their rules,
development counts, weight of evidence and points, plus the coefficients and the scaling. It is
saved as JSON (``format_version`` 1) and holds everything needed to score a row without the
config or the data. The workbook, scoring, stability reports and exports read this object only.

Beside the card, the file carries what monitoring and comparing builds need without the
development data (all optional, so files written before them still load): the development
score histogram and the measured AUC, Gini and KS of every sample (:class:`Development`), the
fate of every characteristic the build considered (:class:`Fate`) and the exclusion rules the
build applied. Each bin's development goods and bads, and each characteristic's information
value, were there from the start.
"""

from __future__ import annotations

import json
import math
from dataclasses import asdict, dataclass, field
from pathlib import Path

from scorecard.card.points import Scaling
from scorecard.config.exclusion_rule import ExclusionRule
from scorecard.constraints import REASONS, SCALE_LIMIT
from scorecard.errors import InputError

FORMAT_VERSION = 1

# Kinds of bin. A numeric characteristic has its value ranges first (in ascending order), then
# missing and its sentinels (values that stand for a fact, such as -999 for "no credit file");
# a categorical one has its groups of levels first.
RANGE, MISSING, SENTINEL, LEVELS, UNSEEN, OUT_OF_RANGE = (
    "range", "missing", "sentinel", "levels", "unseen", "out of range")
BIN_KINDS = (RANGE, MISSING, SENTINEL, LEVELS, UNSEEN, OUT_OF_RANGE)

# Model files written before sentinels were so named still load.
_OLD_BIN_KINDS = {"special": SENTINEL}
_OLD_SENTINELS_KEY = "special_values"


@dataclass(frozen=True)
class Bin:
    """One attribute of a characteristic: its rule, development counts, WoE and points.

    ``lower`` (inclusive) and ``upper`` (exclusive) bound a range bin (None is unbounded);
    ``value`` is a sentinel; ``levels`` are the categorical levels of a group.
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
    sentinels: tuple[float, ...] = ()
    development_range: tuple[float, float] | None = None
    information_value: float = 0.0
    prior_rows: float = 0.0

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
class Development:
    """The development sample as counts: enough for stability and a build-to-build diff.

    ``score_goods`` and ``score_bads`` are weights of goods and bads at each integer score from
    the card's ``min_score`` (rows the card refuses are not in them); ``unit`` says whether they
    are ``"rows"`` or ``"weights"`` (a weight column); ``rows`` is the number of development
    rows, for sample-size-aware critical values. ``performance`` maps a sample name
    (development, holdout, out of time) to its ``{"auc", "gini", "ks"}``. ``bin_goods`` and
    ``bin_bads`` map a characteristic to the development goods and bads of each of its bins;
    they differ from the bins' own counts when the bins were fitted on inferred rejects too,
    and are empty in model files written before they were stored (the bins' counts serve then).
    """

    rows: int
    unit: str
    score_goods: tuple[float, ...]
    score_bads: tuple[float, ...]
    performance: dict = field(default_factory=dict)
    bin_goods: dict = field(default_factory=dict)
    bin_bads: dict = field(default_factory=dict)


@dataclass(frozen=True)
class Fate:
    """What the build decided about one column: its status, at which stage, and why.

    ``status`` is the Characteristics sheet's: 'in model', 'not selected', 'not binned' or
    'not used'. ``bins``: how many bins the column was cut into, and why that many (empty
    when it was not binned, or its cuts or groups came from the config).
    """

    name: str
    status: str
    stage: str
    reason: str
    information_value: float | None = None
    bins: str = ""

    @property
    def selected(self) -> bool:
        return self.status == "in model"


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
    reasons: int = REASONS.default                 # reason codes per scored row unless the caller says otherwise
    development: Development | None = None   # None in model files written before it was stored
    fates: tuple[Fate, ...] = ()
    # How declined applicants were brought into the build (method, settings, bad rates); empty
    # for a card built on accepts alone without declined applications.
    inference: dict = field(default_factory=dict)
    # The rules of data.exclude the build applied, so that scoring can apply them when asked.
    exclusions: tuple[ExclusionRule, ...] = ()

    @property
    def dropped(self) -> tuple[Fate, ...]:
        """Fates of the characteristics the build considered and left out."""
        return tuple(f for f in self.fates if not f.selected)

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
                **_extras_dict(self)}

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
        # utf-8-sig: a byte-order mark, as some editors write, is read like none.
        text = path.read_text(encoding="utf-8-sig")
    except (OSError, UnicodeDecodeError) as exc:
        raise InputError(f"{path}: cannot read the model file ({exc.__class__.__name__})") from None
    return Scorecard.from_json(text, str(path))


def _extras_dict(card: Scorecard) -> dict:
    out = {}
    if card.development is not None:
        out["development"] = asdict(card.development)
    if card.fates:
        out["fates"] = [{**asdict(f), "information_value": _finite_or_none(f.information_value)}
                        for f in card.fates]
    if card.inference:
        out["reject_inference"] = card.inference
    if card.exclusions:
        out["exclusions"] = [rule.record() for rule in card.exclusions]
    return out


def _finite_or_none(value):
    return value if value is not None and math.isfinite(value) else None


def _unset(value) -> bool:
    """True for the defaults a bin leaves out of the file. By identity, not equality: a bound of
    0.0 equals False and must still be written."""
    return value is None or value is False or (isinstance(value, (tuple, str)) and not value)


def _characteristic_dict(c: Characteristic) -> dict:
    out = asdict(c)
    out["bins"] = [{k: v for k, v in asdict(b).items() if not _unset(v)
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
                         _count(raw.get("reasons", REASONS.default), "reasons"),
                         _development_from_dict(raw.get("development")),
                         tuple(_fate_from_dict(f) for f in raw.get("fates", [])),
                         dict(raw.get("reject_inference", {})),
                         tuple(ExclusionRule.from_record(r) for r in raw.get("exclusions", [])))
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
    kind = {"kind": _OLD_BIN_KINDS[raw["kind"]]} if raw.get("kind") in _OLD_BIN_KINDS else {}
    return Bin(**{**raw, **numbers, **bounds, **kind, "levels": _levels(raw.get("levels", []))})


def _development_from_dict(raw) -> Development | None:
    if raw is None:
        return None
    goods = tuple(_number(v, "development.score_goods") for v in raw["score_goods"])
    bads = tuple(_number(v, "development.score_bads") for v in raw["score_bads"])
    if any(not (math.isfinite(v) and v >= 0) for v in goods + bads):
        raise ValueError("development score counts must be finite and >= 0")
    if raw["unit"] not in ("rows", "weights"):
        raise ValueError(f"development.unit must be rows or weights, not {raw['unit']!r}")
    performance = {str(sample): {k: _number(v, f"development.performance.{sample}.{k}")
                                 for k, v in measures.items()}
                   for sample, measures in dict(raw.get("performance", {})).items()}
    per_bin = [{str(name): tuple(_number(v, f"development.{key}.{name}") for v in values)
                for name, values in dict(raw.get(key, {})).items()}
               for key in ("bin_goods", "bin_bads")]
    if any(not (math.isfinite(v) and v >= 0) for table in per_bin for values in table.values()
           for v in values):
        raise ValueError("development bin counts must be finite and >= 0")
    return Development(_count(raw["rows"], "development.rows"), raw["unit"], goods, bads,
                       performance, *per_bin)


def _fate_from_dict(raw: dict) -> Fate:
    iv = raw.get("information_value")
    return Fate(str(raw["name"]), str(raw["status"]), str(raw["stage"]), str(raw["reason"]),
                None if iv is None else _number(iv, "fates.information_value"),
                str(raw.get("bins", "")))


def _characteristic_from_dict(raw: dict) -> Characteristic:
    bins = tuple(_bin_from_dict(b) for b in raw["bins"])
    rng = raw.get("development_range")
    return Characteristic(
        name=str(raw["name"]), kind=str(raw["kind"]), bins=bins,
        coefficient=float(raw["coefficient"]), reason_code=str(raw["reason_code"]),
        reason=str(raw["reason"]), cuts=tuple(float(x) for x in raw.get("cuts", ())),
        sentinels=tuple(float(x) for x in raw.get("sentinels", raw.get(_OLD_SENTINELS_KEY, ()))),
        development_range=None if rng is None else (_number(rng[0], "development_range"),
                                                     _number(rng[1], "development_range")),
        information_value=float(raw.get("information_value", 0.0)),
        # Files written before the prior existed had none.
        prior_rows=_number(raw.get("prior_rows", 0.0), "prior_rows"))


def _check_consistent(card: Scorecard, source: str) -> None:
    """Refuse a model file edited into a state that would score wrongly."""
    s = card.scaling
    for key, value, low in (("base_score", s.base_score, -SCALE_LIMIT),
                            ("base_odds", s.base_odds, 1 / SCALE_LIMIT),
                            ("pdo", s.pdo, 1 / SCALE_LIMIT)):
        if not low <= value < SCALE_LIMIT:
            raise InputError(f"{source}: scaling.{key}: {value:g} is outside {low:g} to "
                             f"{SCALE_LIMIT:g}")
    if not math.isfinite(card.intercept):
        raise InputError(f"{source}: intercept: must be a finite number")
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
        wild = next((b for b in c.bins if not abs(b.points) < SCALE_LIMIT), None)
        if wild is not None:
            raise InputError(f"{where}: points of {wild.label!r}: {wild.points} is beyond "
                             f"±{SCALE_LIMIT:,.0f}")
        if not math.isfinite(c.coefficient) or not all(math.isfinite(b.woe) for b in c.bins):
            raise InputError(f"{where}: coefficient and weights of evidence must be finite")
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
            sentinel_bins = [b.value for b in c.bins if b.kind == SENTINEL]
            if sentinel_bins != list(c.sentinels):
                raise InputError(f"{where}: sentinel bins do not match sentinels")
        else:
            levels = [lv for b in c.bins for lv in b.levels]
            if len(levels) != len(set(levels)):
                raise InputError(f"{where}: a level belongs to two bins")
        for kind in (MISSING, UNSEEN, OUT_OF_RANGE):
            if sum(b.kind == kind for b in c.bins) > 1:
                raise InputError(f"{where}: more than one {kind} bin")
    dev = card.development
    if dev is not None and not (len(dev.score_goods) == len(dev.score_bads)
                                == card.max_score - card.min_score + 1):
        raise InputError(f"{source}: development: the score histogram must have one entry per "
                         f"score from {card.min_score} to {card.max_score}")
