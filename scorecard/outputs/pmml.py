"""A built scorecard as a PMML 4.4 ``Scorecard`` document (the Data Mining Group's open standard).

Every characteristic becomes a ``Characteristic`` whose ``Attribute`` elements hold the points
(``partialScore``) and a predicate for the bin's rule. PMML takes the first attribute whose
predicate is true, so the attributes follow the precedence of
:func:`scorecard.card.scoring.bin_codes`: missing first, then sentinels, then values outside the
development range, then the value ranges (or the groups of levels, then unseen levels).

Reason codes use ``reasonCodeAlgorithm="pointsBelow"``: an evaluator pools the points each
reason code lost against the characteristics' baselines and ranks the codes, as
:func:`scorecard.card.scoring.reason_codes` does. The standard leaves the order of tied codes to the
evaluator, so the baselines settle it: a characteristic's baseline is its maximum attainable
points, less ``g / 2**b`` on the first characteristic of the g-th reason code (``2**b`` at least
the number of codes). The shortfalls are whole points, so this fraction below one changes no
ranking except that of ties, which go to the code first in the scorecard; a shortfall of zero
stays no reason. The powers of two keep the baselines exact in binary. ``reason_k`` is written
so that it is empty when a row has fewer than k reasons, whether the evaluator then returns
nothing or repeats the last reason. A bin whose rows the scorecard refuses is expressed through the
standard's invalid-value handling: the evaluator returns no score for such a row.

The document is built with :mod:`xml.etree.ElementTree`, which escapes every name and level.
"""

from __future__ import annotations

import math
import re
import xml.etree.ElementTree as ET

from scorecard import __version__
from scorecard.card.scorecard import (
    LEVELS,
    MISSING,
    OUT_OF_RANGE,
    RANGE,
    SENTINEL,
    UNSEEN,
    Characteristic,
    Scorecard,
)
from scorecard.card.scoring import reason_groups
from scorecard.constraints import REASONS
from scorecard.errors import InputError
from scorecard.outputs.atomic import atomic_path

NAMESPACE = "http://www.dmg.org/PMML-4_4"
# Characters XML 1.0 cannot carry at all, even escaped.
_NOT_XML = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f\ud800-\udfff\ufffe\uffff]")
# Inside a PMML string Array a value is quoted; a quote or backslash in it is not read alike by
# every evaluator, so such levels are matched one by one instead.
_NOT_IN_ARRAY = re.compile(r'["\\]')


def pmml_document(card: Scorecard, reasons: int = REASONS.default) -> ET.ElementTree:
    """The PMML 4.4 document of ``card`` with ``reasons`` reason-code output fields.

    Examples
    --------
    >>> from scorecard.card.scorecard import Bin, Characteristic, Scorecard, RANGE, MISSING
    >>> from scorecard.card.points import scaling
    >>> b = (Bin("< 1", RANGE, 60, 40, -0.4, 10, upper=1.0), Bin(">= 1", RANGE, 90, 10, 1.0, 30, lower=1.0),
    ...      Bin("missing", MISSING, 5, 5, 0.0, 20))
    >>> card = Scorecard("demo", scaling(600, 50, 20), 0.5,
    ...                  (Characteristic("x", "numeric", b, 1.0, "R01", "x is low", cuts=(1.0,)),))
    >>> model = pmml_document(card).getroot().find("Scorecard")
    >>> [a.get("partialScore") for a in model.iter("Attribute")]
    ['20', '10', '30']
    """
    if reasons < 0:
        raise InputError(f"--reasons {reasons}: must be at least 0")
    _check_names(card, reasons)
    root = ET.Element("PMML", {"xmlns": NAMESPACE, "version": "4.4"})
    header = ET.SubElement(root, "Header", {"description": _text(card.name, "name")})
    ET.SubElement(header, "Application", {"name": "scorecard", "version": __version__})
    ET.SubElement(header, "Annotation").text = (
        "baselineScore is each characteristic's maximum points, less a fraction below one "
        "that ranks tied reason codes in scorecard order")
    fields = ET.SubElement(root, "DataDictionary",
                           {"numberOfFields": str(len(card.characteristics))})
    model = ET.SubElement(root, "Scorecard", {
        "modelName": _text(card.name, "name"), "functionName": "regression",
        "useReasonCodes": "true", "reasonCodeAlgorithm": "pointsBelow", "initialScore": "0",
        "baselineMethod": "max"})
    schema = ET.SubElement(model, "MiningSchema")
    for char in card.characteristics:
        _data_field(fields, char)
        _mining_field(schema, char)
    _output(ET.SubElement(model, "Output"), card, reasons)
    characteristics = ET.SubElement(model, "Characteristics")
    for char, baseline in zip(card.characteristics, tie_breaking_baselines(card)):
        _characteristic(characteristics, char, baseline)
    tree = ET.ElementTree(root)
    ET.indent(tree)
    return tree


def write_pmml(card: Scorecard, path, reasons: int = REASONS.default) -> None:
    """Write the PMML document of ``card`` (one card or segmented) to ``path``, atomically."""
    tree = segmented_pmml_document(card, reasons) if hasattr(card, "rule") \
        else pmml_document(card, reasons)
    with atomic_path(path) as tmp:
        tree.write(tmp, encoding="UTF-8", xml_declaration=True)


def _output_names(reasons: int) -> list[str]:
    return (["score", "bad_probability"] + [f"ranked_reason_{r}" for r in range(1, reasons + 1)]
            + [f"reason_{r}" for r in range(1, reasons + 1)])


def _check_names(card: Scorecard, reasons: int) -> None:
    taken = set(_output_names(reasons))
    for char in card.characteristics:
        if char.name in taken:
            raise InputError(f"characteristics.{char.name}: the name is also an output field "
                             "of the PMML document; rename the column")


def _text(value: str, what: str) -> str:
    if _NOT_XML.search(value):
        raise InputError(f"{what} {value!r}: holds a control character that XML cannot carry")
    return value


def _number(value: float, what: str) -> str:
    if isinstance(value, int):
        return str(value)
    if not math.isfinite(value):
        raise InputError(f"{what}: {value!r} is not a finite number")
    return repr(float(value))


def _data_field(parent: ET.Element, char: Characteristic) -> None:
    name = _text(char.name, "characteristic")
    if char.kind == "categorical":
        field = ET.SubElement(parent, "DataField",
                              {"name": name, "optype": "categorical", "dataType": "string"})
        if _refuses(char, UNSEEN):
            # Listing the valid levels makes any other level invalid, hence refused.
            for level in (lv for b in char.bins if b.kind == LEVELS for lv in b.levels):
                ET.SubElement(field, "Value", {"value": _text(level, f"{name}: level")})
        return
    field = ET.SubElement(parent, "DataField",
                          {"name": name, "optype": "continuous", "dataType": "double"})
    if _refuses(char, OUT_OF_RANGE) and char.development_range is not None:
        low, high = char.development_range
        where = f"characteristics.{name}.development_range"
        bounds = [(low, high)] + [(v, v) for v in char.sentinels]
        for lo, hi in bounds:
            ET.SubElement(field, "Interval", {"closure": "closedClosed",
                                              "leftMargin": _number(lo, where),
                                              "rightMargin": _number(hi, where)})


def _mining_field(parent: ET.Element, char: Characteristic) -> None:
    for b in char.bins:
        if b.rejected and b.kind not in (UNSEEN, MISSING, OUT_OF_RANGE):
            raise InputError(f"characteristics.{char.name}: bin {b.label!r} refuses its rows; "
                             "PMML can refuse only missing, unseen and out-of-range values")
    invalid = _refuses(char, UNSEEN) or _refuses(char, OUT_OF_RANGE)
    attributes = {"name": char.name, "usageType": "active",
                  "invalidValueTreatment": "returnInvalid" if invalid else "asIs"}
    if _refuses(char, MISSING):
        attributes["missingValueTreatment"] = "returnInvalid"
    ET.SubElement(parent, "MiningField", attributes)


def _refuses(char: Characteristic, kind: str) -> bool:
    index = char.bin_index(kind)
    return index is not None and char.bins[index].rejected


def _output(parent: ET.Element, card: Scorecard, reasons: int) -> None:
    ET.SubElement(parent, "OutputField", {"name": "score", "optype": "continuous",
                                          "dataType": "double", "feature": "predictedValue"})
    probability = ET.SubElement(parent, "OutputField", {
        "name": "bad_probability", "optype": "continuous", "dataType": "double",
        "feature": "transformedValue"})
    s = card.scaling
    # bad probability = 1 / (1 + odds), odds of good = exp((score - offset) / factor)
    odds = _apply("exp", _apply("/", _apply("-", _field("score"), _constant(s.offset)),
                                _constant(s.factor)))
    probability.append(_apply("/", _constant(1.0), _apply("+", _constant(1.0), odds)))
    for r in range(1, reasons + 1):
        ET.SubElement(parent, "OutputField", {
            "name": f"ranked_reason_{r}", "optype": "categorical", "dataType": "string",
            "feature": "reasonCode", "rank": str(r)})
    for r in range(1, reasons + 1):
        field = ET.SubElement(parent, "OutputField", {
            "name": f"reason_{r}", "optype": "categorical", "dataType": "string",
            "feature": "transformedValue"})
        ranked = _field(f"ranked_reason_{r}")
        if r == 1:
            field.append(ranked)
            continue
        # Reason codes of a row are distinct, so a repeat of the previous rank means there
        # are fewer than r reasons.
        repeat = _apply("equal", ranked, _field(f"ranked_reason_{r - 1}"))
        nothing = ET.Element("Constant", {"dataType": "string", "missing": "true"})
        field.append(_apply("if", repeat, nothing, _field(f"ranked_reason_{r}")))


def _apply(function: str, *arguments: ET.Element) -> ET.Element:
    element = ET.Element("Apply", {"function": function})
    element.extend(arguments)
    return element


def _field(name: str) -> ET.Element:
    return ET.Element("FieldRef", {"field": name})


def _constant(value: float) -> ET.Element:
    element = ET.Element("Constant", {"dataType": "double"})
    element.text = _number(float(value), "scaling")
    return element


def tie_breaking_baselines(card: Scorecard) -> list[float]:
    """Baseline score of each characteristic: its maximum points less the tie-breaking fraction.

    Examples
    --------
    >>> from scorecard.card.scorecard import Bin, Characteristic, Scorecard, RANGE
    >>> from scorecard.card.points import scaling
    >>> bins = (Bin("< 1", RANGE, 5, 5, 0.0, 10, upper=1.0), Bin(">= 1", RANGE, 5, 5, 0.0, 30, lower=1.0))
    >>> chars = tuple(Characteristic(n, "numeric", bins, 1.0, code, "", cuts=(1.0,))
    ...               for n, code in (("a", "R1"), ("b", "R2"), ("c", "R1")))
    >>> tie_breaking_baselines(Scorecard("demo", scaling(600, 50, 20), 0.0, chars))
    [30.0, 29.5, 30.0]
    """
    labels, group = reason_groups(card)
    scale = 2.0 ** math.ceil(math.log2(len(labels)))
    group = [int(g) for g in group]
    first = {g: group.index(g) for g in set(group)}
    return [float(c.max_points) - (g / scale if first[g] == j else 0.0)
            for j, (c, g) in enumerate(zip(card.characteristics, group))]


def _characteristic(parent: ET.Element, char: Characteristic, baseline: float) -> None:
    element = ET.SubElement(parent, "Characteristic", {
        "name": _text(char.name, "characteristic"),
        "reasonCode": _text(char.reason_code, f"characteristics.{char.name}.reason_code"),
        "baselineScore": _number(baseline, f"characteristics.{char.name}")})
    for b in _in_precedence(char):
        if b.rejected:
            continue
        attribute = ET.SubElement(element, "Attribute", {"partialScore": str(b.points)})
        attribute.append(_predicate(char, b))


def _in_precedence(char: Characteristic):
    order = ((MISSING, SENTINEL, OUT_OF_RANGE, RANGE) if char.kind == "numeric"
             else (MISSING, LEVELS, UNSEEN))
    return [b for kind in order for b in char.bins if b.kind == kind]


def _predicate(char: Characteristic, b) -> ET.Element:
    name = char.name
    where = f"characteristics.{name}: bin {b.label!r}"
    if b.kind == MISSING:
        return _simple(name, "isMissing")
    if b.kind == UNSEEN or (b.kind == RANGE and b.lower is None and b.upper is None):
        return _simple(name, "isNotMissing")
    if b.kind == SENTINEL:
        return _simple(name, "equal", _number(b.value, where))
    if b.kind == OUT_OF_RANGE:
        if char.development_range is None:
            return ET.Element("False")
        low, high = char.development_range
        return _compound("or", _simple(name, "lessThan", _number(low, where)),
                         _simple(name, "greaterThan", _number(high, where)))
    if b.kind == RANGE:
        above = None if b.lower is None else _simple(name, "greaterOrEqual",
                                                     _number(b.lower, where))
        below = None if b.upper is None else _simple(name, "lessThan", _number(b.upper, where))
        if above is None or below is None:
            return above if below is None else below
        return _compound("and", above, below)
    return _levels(name, b.levels)


def _simple(field: str, operator: str, value: str | None = None) -> ET.Element:
    attributes = {"field": field, "operator": operator}
    if value is not None:
        attributes["value"] = value
    return ET.Element("SimplePredicate", attributes)


def _compound(operator: str, *predicates: ET.Element) -> ET.Element:
    element = ET.Element("CompoundPredicate", {"booleanOperator": operator})
    element.extend(predicates)
    return element


def _levels(field: str, levels) -> ET.Element:
    levels = [_text(lv, f"{field}: level") for lv in levels]
    if not levels:
        return ET.Element("False")
    if any(_NOT_IN_ARRAY.search(lv) for lv in levels):
        equal = [_simple(field, "equal", lv) for lv in levels]
        return equal[0] if len(equal) == 1 else _compound("or", *equal)
    element = ET.Element("SimpleSetPredicate", {"field": field, "booleanOperator": "isIn"})
    array = ET.SubElement(element, "Array", {"n": str(len(levels)), "type": "string"})
    array.text = " ".join(f'"{lv}"' for lv in levels)
    return element


def segmented_pmml_document(model, reasons: int = REASONS.default) -> ET.ElementTree:
    """A segmented model as one PMML 4.4 document: a ``MiningModel`` whose ``Segmentation``
    (``selectFirst``) holds each segment's ``Scorecard`` under a predicate on the segment
    column. A row no segment takes matches no predicate, so the evaluator returns no score.

    Each card's document is made by :func:`pmml_document` and its Scorecard moved in whole, so
    the cards read exactly as they would alone; a column shared by cards must be declared alike.
    """
    rule = model.rule
    root = ET.Element("PMML", {"xmlns": NAMESPACE, "version": "4.4"})
    header = ET.SubElement(root, "Header", {"description": _text(model.name, "name")})
    ET.SubElement(header, "Application", {"name": "scorecard", "version": __version__})
    fields = ET.SubElement(root, "DataDictionary")
    declared: dict[str, bytes] = {}
    mining = ET.Element("MiningModel", {"modelName": _text(model.name, "name"),
                                        "functionName": "regression"})
    schema = ET.SubElement(mining, "MiningSchema")
    segmentation = ET.Element("Segmentation", {"multipleModelMethod": "selectFirst"})
    for index, (name, card) in enumerate(zip(rule.names, model.cards)):
        if rule.column in card.names:
            raise InputError(f"segments.column: {rule.column} is also a characteristic of the "
                             f"card of segment {name!r}")
        doc = pmml_document(card, reasons).getroot()
        for field in doc.find("DataDictionary"):
            field.tail = None           # the indentation, which depends on the field's place
            own, column = ET.tostring(field), field.get("name")
            if column not in declared:
                declared[column] = own
                fields.append(field)
            elif declared[column] != own:
                raise InputError(f"characteristics.{column}: the segments' cards treat its "
                                 "values differently (which levels or range they refuse), "
                                 "which one PMML document cannot declare")
        segment = ET.SubElement(segmentation, "Segment", {"id": str(index + 1)})
        segment.append(_segment_predicate(rule, index))
        segment.append(doc.find("Scorecard"))
    kind = {"optype": "continuous", "dataType": "double"} if rule.cuts is not None \
        else {"optype": "categorical", "dataType": "string"}
    ET.SubElement(fields, "DataField", {"name": _text(rule.column, "segments.column"), **kind})
    fields.set("numberOfFields", str(len(fields)))
    for field in fields:
        ET.SubElement(schema, "MiningField", {"name": field.get("name"), "usageType": "active"})
    _output(ET.SubElement(mining, "Output"), model.cards[0], reasons)
    mining.append(segmentation)
    root.append(mining)
    tree = ET.ElementTree(root)
    ET.indent(tree)
    return tree


def _segment_predicate(rule, index: int) -> ET.Element:
    name = rule.column
    if rule.cuts is None:
        return _levels(name, rule.groups[index])
    low, high = rule.bounds(index)
    where = "segments.cuts"
    parts = [p for p in (None if low is None else _simple(name, "greaterOrEqual", _number(low, where)),
                         None if high is None else _simple(name, "lessThan", _number(high, where)))
             if p is not None]
    return parts[0] if len(parts) == 1 else _compound("and", *parts)
