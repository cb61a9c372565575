"""Inputs shown to people (saved page, print, compare): the editor's labels, units written out."""

import json
import re
from pathlib import Path

from server.inputs_table import compare_rows, input_rows

DEMOS = Path(__file__).resolve().parents[1] / "demo_cases"


def demo(name):
    return json.loads((DEMOS / f"{name}.json").read_text())["inputs"]


def test_rows_use_labels_and_written_units():
    rows = dict(input_rows(demo("kaolin_pump_fed")))
    assert rows["Solids density"] == "2600 kg/m³"
    assert rows["Feed"] == "centrifugal pump curve"
    assert rows["Pump curve (flow, pressure per line)"].startswith("0 m³/h at 8.5 bar; 20 m³/h at 8 bar")
    assert rows["End at a flow per filter area below"] == "60 L/(m²·h)"
    assert rows["Chamber thicknesses to compare"] == "25 mm, 32 mm, 40 mm, 50 mm"
    assert not any(re.fullmatch(r"[a-z_]+(\.[a-z_]+)*", label) for label in rows)  # no API keys


def test_bare_numbers_say_their_unit():
    inputs = demo("copper_concentrate")
    inputs["press"]["fill_fraction"] = 0.95
    inputs["medium_resistance"] = 4e10
    inputs["cycle"]["downtime"] = 1080
    rows = dict(input_rows(inputs))
    assert rows["Usable chamber fill"] == "0.95 (95 %)"
    assert rows["Cloth resistance R_m"] == "4×10¹⁰ 1/m"
    assert rows["Downtime per cycle"] == "1080 s"
    assert rows["Pressure at which α was measured"] == "7 bar"
    assert rows["Press running hours per day"] == "22 h"


def test_compare_rows_mark_what_differs_in_editor_order():
    a, b = demo("copper_concentrate"), demo("copper_concentrate")
    b["press"]["chamber_thickness"] = "60 mm"
    rows = compare_rows([a, b])
    labels = [label for label, _, _ in rows]
    assert labels.index("Solids in the slurry") < labels.index("Chamber thickness") < labels.index("Feed pressure")
    differ = {label: values for label, values, d in rows if d}
    assert differ == {"Chamber thickness": ["40 mm", "60 mm"]}


def test_numbers_typed_without_a_unit_say_their_unit_too():
    # the editor sends what was typed: "22" for the running hours (a plant-engineer check
    # found "22" with no unit on the saved page); a bare number is in the field's bare unit
    inputs = demo("copper_concentrate")
    inputs["target"]["hours_per_day"] = "22"
    inputs["cycle"]["downtime"] = " 1080 "
    inputs["press"]["chamber_thickness"] = "40 mm"
    rows = dict(input_rows(inputs))
    assert rows["Press running hours per day"] == "22 h"
    assert rows["Downtime per cycle"] == "1080 s"
    assert rows["Chamber thickness"] == "40 mm"


def test_washing_choices_are_left_out_without_a_wash():
    # the editor sends its washing choices with every request; without a wash they said
    # "through-washing" on the saved page of a case that washes nothing (a plant-engineer check)
    inputs = demo("gypsum_chamber_limited")
    inputs["cycle"].update(washing="through", wash_basis="filtrate", wash_pressure="4 bar")
    rows = dict(input_rows(inputs))
    assert "Washing" not in rows and "… counted per" not in " ".join(rows)
    assert rows["Wash pressure"] == "4 bar (not used: no wash given)"
    for no_wash in (0, "0", "0 %"):
        inputs["cycle"]["wash_ratio"] = no_wash
        assert "Washing" not in dict(input_rows(inputs))
    # with a wash, as entered
    inputs["cycle"]["wash_ratio"] = "1.5"
    rows = dict(input_rows(inputs))
    assert rows["Washing"] == "through-washing (wash plates)" and rows["Wash pressure"] == "4 bar"
    washed = dict(input_rows(demo("hydroxide_membrane_wash")))  # a wash target, no ratio
    assert washed["Washing"] == "simple washing (filtrate path)"
    assert not any("not used" in v for v in washed.values())
    # a solute removal specification sets the wash when no ratio is given (a review found
    # its settings marked "not used" while the wash it set was calculated)
    specified = demo("hydroxide_membrane_wash")
    del specified["cycle"]["wash_target"]
    specified["cycle"].update(specs={"min_solute_removal": "95 %"}, wash_pressure="6 bar")
    rows = dict(input_rows(specified))
    assert rows["Washing"] == "simple washing (filtrate path)" and rows["Wash pressure"] == "6 bar"
    assert not any("not used" in v for v in rows.values())
