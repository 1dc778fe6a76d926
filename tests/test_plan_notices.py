"""tuning.plan.notices: the plan's words said again in other units and languages.

Behaviour checks, not validation: every template renders in every display, the document's English
is what the templates give, a US rendering carries no metric unit. Unit conversions are checked
against pint (its own definitions of degF and inch), not against tuning.display's factors.
"""

from __future__ import annotations

import json
import re
import warnings
from pathlib import Path

import pint
import pytest
import scenarios

from tuning.config import load_event, load_fleet
from tuning.display import Display
from tuning.plan import document, make_plan, notices
from tuning.plan.notices import DOCUMENT, TEXTS, say, say_item

DISPLAYS = [Display(u, lang) for u in ("metric", "us") for lang in ("en", "de")]
US = [d for d in DISPLAYS if d.units == "us"]
#: What a US rendering must not show: degrees Celsius, hectopascal, metres, millimetres.
METRIC = re.compile(r"°C|hPa|\d m\b|\bm\b(?=[ .,;)])|\d mm\b")
UREG = pint.UnitRegistry()


def sample(name: str):
    """An invented value for a parameter, by its name (the rules of the module's docstring)."""
    if name in ("throttle",):
        return {"id": "throttle/span", "params": {"low_pct": 25, "high_pct": 38}}
    if name == "cure":
        return {"id": "cure/main-jet", "params": {}}
    if name == "source":
        return {"id": "source/bike", "params": {"origin": "T07"}}
    if name in ("part", "Part"):
        return "pilot_jet"
    if name == "screw":
        return "fuel"
    if name == "direction":
        return "richer"
    if name == "count":
        return 2
    if name.endswith("_quarter_turns"):
        return 1.25
    if name.endswith(("_C", "_m", "_hPa", "_mm", "_turns")):
        return {"_C": -3.4, "_m": 1650.0, "_hPa": 1013.2, "_mm": 8.0, "_turns": 1.5}["_" + name.rpartition("_")[2]]
    if name.endswith("_pct"):
        return 12
    return "X1"


def sample_params(text_id: str) -> dict:
    template = TEXTS[text_id]
    text = " ".join(template) if isinstance(template, tuple) else template
    names = set(re.findall(r"%\((\w+)\)s", text))
    if "Part" in names:
        names = (names - {"Part"}) | {"part"}
    return {n: sample(n) for n in sorted(names)}


@pytest.mark.parametrize("text_id", sorted(TEXTS))
@pytest.mark.parametrize("display", DISPLAYS, ids=lambda d: f"{d.units}-{d.language}")
def test_every_template_renders_in_every_display(text_id, display):
    text = say(text_id, sample_params(text_id), display)
    assert text and "%(" not in text and "%%" not in text
    if display.units == "us":
        assert not METRIC.search(text), text


def test_singular_and_plural_templates_take_the_same_parameters():
    for text_id, template in TEXTS.items():
        if isinstance(template, tuple):
            one, many = (set(re.findall(r"%\((\w+)\)s", t)) for t in template)
            assert one == many and "count" in one, text_id


def test_every_text_id_named_in_document_py_exists():
    source = Path(document.__file__).read_text(encoding="utf-8")
    named = set(re.findall(r'"([a-z][a-z-]*(?:/[a-z-]+)+)"', source))  # "order/between", "no-safe-jet/order"
    named |= set(re.findall(r'warning\("([a-z-]+)"(?:\)|, params=)', source))  # warnings whose id is their code
    named |= {f"source/{kind}" for kind in ("fitted", "own", "bike", "shelf", "spare", "order", "shelf-or-order")}
    named |= {"source/bike/waits", "source/spare/waits"}  # f"source/{source}" + "/waits"
    named -= {"shelf-or-order"}
    assert len(named) > 40
    assert sorted(named - set(TEXTS)) == []
    assert set(notices.CODES) <= {t.split("/", 1)[0] for t in TEXTS}  # every warning code has its words


# --- the plan's documents: their English is the templates', their US words carry no metric unit ---
def said_objects(value):
    """Every object of a document carrying a text id, and the English the document stored with it."""
    if isinstance(value, dict):
        if value.get("id") in TEXTS:
            english = next(value[k] for k in ("text", "message", "label", "change") if k in value)
            yield value, english
        for k, v in value.items():
            if k != "params":  # nested texts there are parts of their parent's words
                yield from said_objects(v)
    elif isinstance(value, list):
        for v in value:
            yield from said_objects(v)


@pytest.fixture(scope="module")
def documents(tmp_path_factory):
    """The demo plan and the scenarios' plans, through JSON as the report reads them."""
    out = {}
    for name, make in (
        ("uphill", scenarios.uphill),
        ("downhill", scenarios.downhill),
        ("downhill-no-stock", lambda f: scenarios.downhill(f, stock=False)),
    ):
        fleet, event = make(tmp_path_factory.mktemp(name))
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            doc = make_plan(load_fleet(fleet), load_event(event))
        out[name] = json.loads(json.dumps(doc, ensure_ascii=False))
    return out


def test_english_metric_is_the_documents_stored_text(documents):
    seen = set()
    for name, doc in documents.items():
        for item, english in said_objects(doc):
            assert say(item["id"], item["params"]) == english, (name, item["id"])
            assert say_item(item) == english
            seen.add(item["id"])
    assert len(seen) > 35  # most of the texts occur in these plans


def test_a_display_in_metric_english_differs_only_by_its_minus_and_percent_sign(documents):
    english = Display()
    for item, stored in said_objects(documents["downhill"]):
        shown = say_item(item, english)
        unify = lambda text: re.sub(r"(\d) %", r"\1%", text)  # noqa: E731
        assert unify(shown.replace("−", "-")) == unify(stored)
        assert ("−" in shown) == bool(re.search(r"-\d", stored))  # negative numbers, never hyphenated words


@pytest.mark.parametrize("display", US, ids=lambda d: d.language)
def test_us_words_of_the_plans_carry_no_metric_unit(documents, display):
    found_f = 0
    for doc in documents.values():
        for item, _ in said_objects(doc):
            text = say_item(item, display)
            assert not METRIC.search(text), text
            found_f += "°F" in text
    assert found_f > 10  # the cold-start, choke and hot-fuel temperatures were said in °F


def test_every_check_and_warning_of_the_plan_is_a_said_object(documents):
    doc = documents["downhill"]
    for e in doc["entries"]:
        assert all(set(c) == {"text", "id", "params"} for c in e["checks"])
        assert all(w["id"].split("/", 1)[0] == w["code"] for w in e["warnings"])
        for part in ("main_jet", "pilot_jet", "clip", "mixture_screw"):
            assert e["settings"][part]["id"].startswith("setting/")
    for order in doc["work_orders"]:
        assert order["id"].startswith("order/")
        assert all(c["id"].startswith("work/") for b in order["bikes"] for c in b["changes"])


# --- units and numbers ------------------------------------------------------------------------
@pytest.mark.parametrize("celsius, fahrenheit", [(-12.3, 9.9), (3.2, 37.8), (30, 86)])
def test_temperatures_in_us_words_agree_with_pint(celsius, fahrenheit):
    expected = UREG.Quantity(celsius, UREG.degC).to(UREG.degF).magnitude  # pint's own degF
    assert round(expected, 1) == pytest.approx(fahrenheit)
    digits = 0 if isinstance(celsius, int) else 1
    text = say("cold-start", {"start_C": celsius}, Display("us"))
    assert f"({expected:.{digits}f} °F at the session start)" in text


def test_float_level_in_inches_agrees_with_pint():
    inches = UREG.Quantity(8.0, UREG.mm).to(UREG.inch).magnitude  # 0.31496 in
    assert (
        say("check/float-level", {"float_level_mm": 8.0}, Display("us"))
        == f"Float level: check {inches:.3f} in (value from the settings)."
    )
    assert say("check/float-level", {"float_level_mm": 8.0}) == "Float level: check 8.0 mm (value from the settings)."


def test_german_numbers_have_a_decimal_comma_and_a_true_minus():
    de = Display("metric", "de")
    assert "−3,4 °C" in say("check/choke", {"t_min_C": -3.4}, de)
    assert "-3.4 °C" in say("check/choke", {"t_min_C": -3.4})  # the document's own words: ASCII, as before


@pytest.mark.parametrize(
    "turns, words", [(0.25, "¼ turn"), (0.75, "¾ turn"), (1.0, "1 turn"), (1.5, "1½ turns"), (2.0, "2 turns")]
)
def test_quarter_turns(turns, words):
    params = {"screw": "air", "by_quarter_turns": turns, "direction": "leaner"}
    assert say("setting/screw-out", params) == f"air screw {words} out: leaner"


def test_stored_numbers_print_as_the_english_text_did():
    assert notices.printed(3.249, ".1f") == 3.2 and isinstance(notices.printed(12.5, ".0f"), int)
    assert notices.printed(3.0, "g") == 3 and isinstance(notices.printed(3.0, "g"), int)
    assert (
        say("check/choke", {"t_min_C": notices.printed(-0.04, ".1f")})
        == f"Choke: cold air ({-0.04:.1f} °C minimum): choke for the first start."
    )
    assert say(
        "assumed-screw-range",
        {"usable_low_turns": notices.printed(1.0, "g"), "usable_high_turns": notices.printed(2.5, "g")},
    ).startswith("The screw's usable range is the default 1..2.5 turns out")


def test_say_item_falls_back_to_the_english_text():
    assert say_item("already words") == "already words"
    assert say_item({"text": "a check without id"}) == "a check without id"
    assert say_item({"code": "x", "message": "a message"}, Display("us", "de")) == "a message"
    with pytest.raises(KeyError):
        say_item({"kind": "nothing to say"})


def test_a_warning_takes_only_the_words_of_its_code():
    w = notices.warning(
        "no-safe-jet",
        "no-safe-jet/order",
        {"part": "main_jet", "size": "150", "family": "f", "fitted": "155", "lean_pct": 4},
    )
    assert list(w) == ["code", "severity", "message", "id", "params"] and w["severity"] == "danger"
    with pytest.raises(ValueError):
        notices.warning("stock-shortage", "no-safe-jet/order", {})


def test_document_words_are_the_default_display():
    assert DOCUMENT.units == "metric" and DOCUMENT.language == "en"
    assert say("stock-shortage", {"part": "main_jet", "size": "150", "family": "f", "fitted": "155"}).startswith(
        "Main jet 150 (f)"
    )


def test_remembered_document_words_keep_apart_values_that_compare_equal():
    # regression: the document's words are cached; 0.0 == -0.0 and 3 == 3.0 must still print apart
    assert say("check/choke", {"t_min_C": 0.0}).startswith("Choke: cold air (0.0 °C")
    assert say("check/choke", {"t_min_C": -0.0}).startswith("Choke: cold air (-0.0 °C")
    assert "(1..3 turns)" in say("screw-out-of-range", {"screw": "air", "usable_low_turns": 1, "usable_high_turns": 3})
    assert "(1.0..3.0 turns)" in say(
        "screw-out-of-range", {"screw": "air", "usable_low_turns": 1.0, "usable_high_turns": 3.0}
    )


def _enums(node, key, found):
    """Every ``enum`` under a property named ``key`` anywhere in the schema ``node``."""
    if isinstance(node, dict):
        if key in node.get("properties", {}) and "enum" in node["properties"][key]:
            found.append(node["properties"][key]["enum"])
        for value in node.values():
            _enums(value, key, found)
    elif isinstance(node, list):
        for value in node:
            _enums(value, key, found)
    return found


def test_the_schema_lists_the_codes_severities_and_icing_bands_of_notices():
    """Consistency, not validation: the published schema writes the vocabulary out (JSON readers
    cannot import it); it must say what tuning.plan.notices, its one home, says."""
    schema = json.loads((Path(notices.__file__).parents[1] / "schemas" / "recommendations.schema.json").read_text())
    codes, severities = _enums(schema, "code", []), _enums(schema, "severity", [])
    assert len(codes) == 2 and len(severities) == 2  # entries' warnings and bikes' notices
    assert all(c == list(notices.CODES) for c in codes)
    assert all(s == list(notices.SEVERITIES) for s in severities)
    weather_row = schema["properties"]["weather"]["items"]["properties"]["icing_risk"]
    assert (weather_row["minimum"], weather_row["maximum"]) == (0, len(notices.ICING_RISK_NAMES) - 1)
