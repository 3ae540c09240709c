"""results.Serialiser: a result dataclass's field metadata decide its results.json form, and
every null it writes is listed in ``not_applicable`` with the reason of the object around it.

The expected values are hand computations from the rules in the Serialiser's docstring.
"""

import math
from dataclasses import dataclass, field

from validator._common import ConfidenceInterval
from validator.results import Serialiser, json_fields


@dataclass(frozen=True)
class Inner:
    a: float
    b: int


@dataclass(frozen=True)
class Part:
    value: float | None
    reason: str = ""


@dataclass(frozen=True)
class Toy:
    name: str
    pvalue: float | None = field(metadata={"json": "p_value"})
    hidden: int = field(metadata={"json": None})
    maybe: int | None = field(metadata={"omit_none": True})
    only_for_x: float = field(metadata={"when": lambda toy: toy.name == "x"})
    ci: ConfidenceInterval | None = field(metadata={"interval": "pair"})
    other_ci: ConfidenceInterval | None = field(metadata={"interval": "null"})
    inner: Inner = field(metadata={"flatten": (("a_value", "a"), ("pair", ("a", "b")))})
    limit: list = field(metadata={"as_float": True})
    ratio: float | None = field(metadata={"null_reason": "ratio_reason"})
    parts: tuple[Part, ...]
    reason: str = ""

    @property
    def ratio_reason(self) -> str:
        return "no ratio without a positive mean"


def toy(**changes):
    values = dict(name="x", pvalue=0.25, hidden=3, maybe=None, only_for_x=1.5,
                  ci=ConfidenceInterval(1.0, 2.0, 0.95), other_ci=None, inner=Inner(0.5, 2), limit=[1, 2],
                  ratio=None, parts=(Part(1.0), Part(None, "one result")), reason="")
    values.update(changes)
    return Toy(**values)


def test_field_metadata_give_names_omissions_and_forms():
    out = Serialiser()(toy(), "toy")
    # hand computation, see the Serialiser docstring
    assert out == {"name": "x", "p_value": 0.25, "only_for_x": 1.5, "ci": [1.0, 2.0], "ci_level": 0.95,
                   "other_ci": None, "other_ci_level": None, "a_value": 0.5, "pair": [0.5, 2],
                   "limit": [1.0, 2.0], "ratio": None, "parts": [{"value": 1.0, "reason": ""},
                                                                 {"value": None, "reason": "one result"}],
                   "reason": ""}
    assert list(out) == ["name", "p_value", "only_for_x", "ci", "ci_level", "other_ci", "other_ci_level",
                         "a_value", "pair", "limit", "ratio", "parts", "reason"]     # declaration order
    assert isinstance(out["limit"][0], float)
    assert "only_for_x" not in Serialiser()(toy(name="y"), "toy")
    assert Serialiser()(toy(maybe=4, ci=None), "toy")["maybe"] == 4
    assert Serialiser()(toy(ci=None), "toy")["ci"] == [None, None]


def test_non_finite_numbers_become_null():
    out = Serialiser()(toy(pvalue=math.nan, only_for_x=math.inf), "toy")
    assert out["p_value"] is None and out["only_for_x"] is None


def test_every_null_is_listed_with_the_nearest_reason():
    serialise = Serialiser()
    serialise(toy(reason="degenerate design", pvalue=math.nan), "toy")
    # hand computation: the field reason for ratio, the object's own reason for parts.1,
    # the toy's reason for other_ci and p_value (listed once, where first met)
    assert serialise.not_applicable == [
        {"item": "toy", "reason": "degenerate design"},
        {"item": "toy.ratio", "reason": "no ratio without a positive mean"},
        {"item": "toy.parts.1", "reason": "one result"}]


def test_a_null_without_any_reason_is_not_invented():
    serialise = Serialiser()
    serialise(toy(ratio=1.0), "toy")                # other_ci is null, but nobody says why
    assert serialise.not_applicable == [{"item": "toy.parts.1", "reason": "one result"}]


def test_json_fields_lists_what_can_be_written():
    assert json_fields(Toy) == {"name", "p_value", "maybe", "only_for_x", "ci", "ci_level", "other_ci",
                                "other_ci_level", "a_value", "pair", "limit", "ratio", "parts", "value",
                                "reason"}
