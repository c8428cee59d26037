"""The invented demo data: reproducible from fixed seeds, and examples/ holds exactly what the generator writes.

This data is invented for the demo only; no reference check uses it.
"""

from pathlib import Path

import pandas as pd

from narrator import demo

EXAMPLES = Path(__file__).resolve().parent.parent / "examples"


def test_examples_folder_matches_the_generator():
    for name, data in demo.data_files().items():
        assert (EXAMPLES / name).read_bytes() == data, f"examples/{name} is stale: run examples/make_examples.py"
    for name, text in demo.recipe_texts().items():
        assert (EXAMPLES / name).read_text(encoding="utf-8") == text, f"examples/{name} is stale"


def test_generator_is_deterministic():
    assert demo.data_files() == demo.data_files()


def test_housing_data_has_the_problems_the_demo_shows():
    october = demo.housing_waits("2026-10")
    cells = october["days_to_first_payment"]
    assert (cells == "").sum() + (cells == "N/A").sum() == 9
    assert (cells == "-3").sum() == 1 and (cells == "99").sum() == 3
    assert set(october["office"]) == {"Northside office", "Eastgate office", "Mobile unit"}
    assert (october["office"] == "Mobile unit").sum() < 10  # the suppressed group
    november = demo.housing_waits("2026-11")
    assert len(november) > len(october)
    assert november["application_id"].is_unique


def test_water_data_is_written_the_spanish_way():
    water = demo.water_use()
    assert water["litros_dia"].str.contains(",").all() or (water["litros_dia"] == "-").any()
    assert not water["litros_dia"].str.contains(r"\.").any()


def test_repair_data_reads_back_from_excel(tmp_path):
    path = tmp_path / "repair.xlsx"
    path.write_bytes(demo.data_files()["repair_turnaround.xlsx"])
    frame = pd.read_excel(path, sheet_name="jobs")
    assert list(frame.columns) == ["job", "kind", "hours"] and len(frame) == 200
