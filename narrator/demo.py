"""Invented demonstration data, in scenarios of our own, made from fixed seeds.

Nothing here describes real people or places: every value is drawn from a
random number generator with a recorded seed, so the demo and the files in
examples/ are the same byte for byte on every machine.

==============================  ===============================================
Scenario                        What it shows
==============================  ===============================================
housing (``housing_waits``)     days from application to first rent payment in
                                an invented housing-assistance program: blank
                                and "N/A" cells, one impossible wait (-3 days),
                                a missing-value code (99), real long waits,
                                two offices and a tiny third one (suppressed),
                                and a second month of data for regeneration
water (``water_use``)           litres per household per day at an invented
                                utility, written the Spanish way (decimal
                                comma, semicolons), meter readings heaped at
                                round numbers, a few leaks; report in es_ES
repair (``repair_turnaround``)  hours from drop-off to pick-up at an invented
                                repair shop, in an Excel workbook
quarterly report                the housing program's own quarterly report to
(``quarterly_report``)          its board, with ten places marked for
                                ``narrator fill`` (templates/demo/quarterly-report.toml)
==============================  ===============================================

The recipes that go with the data live in templates/demo/ (words are data).
"""

from __future__ import annotations

import io
import re
from pathlib import Path

import numpy as np
import pandas as pd

from narrator.resources import template_file
from narrator.safe_io import atomic_write_bytes

SEED = 20261201
INVENTED = "invented data for the narrator demo; no real people, places or programs"
RECIPES = ("housing", "water", "repair")
QUARTERLY_REPORT = "quarterly-report.docx"  # the housing program's own report, filled from housing.toml
FIXED_TIME = "2026-12-01T09:00:00+00:00"


def _housing_frame(rng: np.random.Generator, n_north: int, n_east: int, n_mobile: int, month: str) -> pd.DataFrame:
    north = 3 + rng.lognormal(np.log(16), 0.5, n_north)
    east = 3 + rng.lognormal(np.log(23), 0.5, n_east)
    mobile = 5 + rng.lognormal(np.log(14), 0.5, n_mobile)
    days = np.concatenate([north, east, mobile]).round()
    office = ["Northside office"] * n_north + ["Eastgate office"] * n_east + ["Mobile unit"] * n_mobile
    amounts = rng.normal(860, 190, days.size).clip(250).round(2)
    order = rng.permutation(days.size)
    days, amounts = days[order], amounts[order]
    office = [office[i] for i in order]
    cells = [f"{int(d)}" for d in days]
    # Real long waits (kept: they are real cases), blanks, one impossible value, a missing-value
    # code some offices type (99): each at its own row.
    long_waits = [97, 121, 146] if month == "2026-10" else [97, 121, 146, 133, 158]
    specials = [str(v) for v in long_waits] + ["", "", "N/A"] * 3 + ["-3"] + ["99"] * 3
    for position, text in zip(rng.choice(days.size, len(specials), replace=False), specials, strict=True):
        cells[position] = text
    money = [f"${a:,.2f}" for a in amounts]
    ids = [f"HA-{month.replace('-', '')}-{k:04d}" for k in range(1, days.size + 1)]
    return pd.DataFrame(
        {"application_id": ids, "office": office, "days_to_first_payment": cells, "first_payment": money}
    )


def housing_waits(month: str = "2026-11") -> pd.DataFrame:
    """Invented applications for two months; November repeats October's rows and adds new ones."""
    rng = np.random.default_rng(SEED)
    october = _housing_frame(rng, 150, 90, 6, "2026-10")
    if month == "2026-10":
        return october
    if month != "2026-11":
        raise ValueError(f"the housing demo has months 2026-10 and 2026-11, not {month}")
    added = _housing_frame(np.random.default_rng(SEED + 1), 40, 30, 2, "2026-11")
    refreshed = october.copy()
    # A refresh corrects a few earlier entries as well as adding rows.
    corrected = np.random.default_rng(SEED + 2).choice(len(refreshed), 4, replace=False)
    refreshed.loc[corrected, "days_to_first_payment"] = ["18", "25", "31", "22"]
    return pd.concat([refreshed, added], ignore_index=True)


def water_use() -> pd.DataFrame:
    """Invented daily water use per household, with meter readings heaped at multiples of 10 litres."""
    rng = np.random.default_rng(SEED + 10)
    litres = rng.lognormal(np.log(310), 0.35, 420)
    heaped = rng.random(litres.size) < 0.45
    litres = np.where(heaped, np.round(litres / 10) * 10, np.round(litres, 1))
    leaks = rng.choice(litres.size, 4, replace=False)
    litres[leaks] = [2150.0, 2790.5, 3320.0, 1880.0]
    cells = [f"{v:.1f}".replace(".", ",") for v in litres]
    for position in rng.choice(litres.size, 7, replace=False):
        cells[position] = "-"
    district = rng.choice(["Barrio Alto", "La Vega", "El Puerto"], litres.size)
    return pd.DataFrame({"hogar": [f"H{k:05d}" for k in range(1, litres.size + 1)], "barrio": district,
                         "litros_dia": cells})


def repair_turnaround() -> pd.DataFrame:
    """Invented repair jobs: hours from drop-off to pick-up, two kinds of job."""
    rng = np.random.default_rng(SEED + 20)
    phones = rng.gamma(2.2, 9.0, 130) + 1
    laptops = rng.gamma(3.5, 14.0, 70) + 4
    hours = np.concatenate([phones, laptops]).round(1)
    kind = ["phone"] * phones.size + ["laptop"] * laptops.size
    order = rng.permutation(hours.size)
    hours[order[:2]] = [310.5, 402.0]  # parts on back-order: real, very long
    return pd.DataFrame({"job": [f"R{k:04d}" for k in range(1, hours.size + 1)],
                         "kind": [kind[i] for i in order], "hours": hours[order]})


def _csv_bytes(frame: pd.DataFrame, separator: str = ",") -> bytes:
    buffer = io.StringIO()
    frame.to_csv(buffer, index=False, sep=separator, lineterminator="\n")
    return buffer.getvalue().encode("utf-8")


def _xlsx_bytes(frame: pd.DataFrame) -> bytes:
    from openpyxl import Workbook

    workbook = Workbook()
    sheet = workbook.active
    sheet.title = "jobs"
    sheet.append(list(frame.columns))
    for row in frame.itertuples(index=False):
        sheet.append(list(row))
    workbook.properties.creator = "narrator demo"
    # Fixed timestamps keep the workbook the same byte for byte.
    import datetime as dt

    fixed = dt.datetime(2026, 12, 1, 9, 0, 0)
    workbook.properties.created = fixed
    workbook.properties.modified = fixed
    buffer = io.BytesIO()
    workbook.save(buffer)
    return _fixed_zip_times(buffer.getvalue())


def _fixed_zip_times(data: bytes) -> bytes:
    """Rewrite a zip archive with fixed member times so the file is reproducible."""
    import zipfile

    source = zipfile.ZipFile(io.BytesIO(data))
    out = io.BytesIO()
    with zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED) as target:
        for info in source.infolist():
            member = zipfile.ZipInfo(info.filename, date_time=(2026, 12, 1, 9, 0, 0))
            member.compress_type = zipfile.ZIP_DEFLATED
            content = source.read(info.filename)
            if info.filename == "docProps/core.xml":  # openpyxl stamps the save time here
                content = re.sub(rb"(<dcterms:modified[^>]*>)[^<]*", rb"\g<1>2026-12-01T09:00:00Z", content)
            target.writestr(member, content)
    return out.getvalue()


def quarterly_report() -> bytes:
    """The invented housing program's own quarterly report, as a .docx whose markers are already places.

    Its prose comes from templates/demo/quarterly-report.toml; the plain
    document is laid out by :func:`narrator.writer.plain_document`, then each
    ``[narrator:...]`` marker is made a place as ``narrator mark`` makes it.
    """
    import datetime as dt
    import tomllib

    from narrator.places.fill import marker_tag
    from narrator.places.package import WordPackage
    from narrator.writer import plain_document

    spec = tomllib.loads(template_file("demo", "quarterly-report.toml").read_text(encoding="utf-8"))
    moment = dt.datetime.fromisoformat(FIXED_TIME)
    plain = plain_document(
        [(block["style"], block["text"]) for block in spec["blocks"]], header=spec["header"],
        properties={"title": spec["title"], "author": spec["organisation"]}, generated_at=moment, locale="en_US",
    )
    marked = WordPackage.from_bytes(plain, QUARTERLY_REPORT).mark(marker_tag, moment=moment)
    if marked.refused or marked.data is None:
        raise ValueError(f"the demo report's markers did not all become places: {marked.refused}")
    return marked.data


def data_files() -> dict[str, bytes]:
    """Every demo data file by name, as bytes."""
    october = _csv_bytes(housing_waits("2026-10"))
    return {
        "housing_waits.csv": october,  # what the housing recipe reads; the demo later refreshes it
        "housing_waits_2026-10.csv": october,
        "housing_waits_2026-11.csv": _csv_bytes(housing_waits("2026-11")),
        "water_use.csv": _csv_bytes(water_use(), separator=";"),
        "repair_turnaround.xlsx": _xlsx_bytes(repair_turnaround()),
        QUARTERLY_REPORT: quarterly_report(),
    }


def recipe_texts() -> dict[str, str]:
    """The demo recipes by file name, from templates/demo/."""
    return {f"{name}.toml": template_file("demo", f"{name}.toml").read_text(encoding="utf-8") for name in RECIPES}


def write_examples(folder: Path) -> list[Path]:
    """Write the demo data and recipes into ``folder`` (created if needed); returns the files written.

    The housing recipe reads ``housing_waits.csv``: the demo writes the
    October data there first, builds, then the November data, and builds
    again, so the report shows what changed.
    """
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    written = []
    for name, data in data_files().items():
        atomic_write_bytes(folder / name, data)
        written.append(folder / name)
    for name, text in recipe_texts().items():
        atomic_write_bytes(folder / name, text.encode("utf-8"))
        written.append(folder / name)
    return written


def run_demo(folder: Path, *, step=None) -> list:
    """Write the examples into ``folder`` and build every report their recipes name.

    The housing scenario is built twice: on October's data, then on the
    November refresh, so its reports carry the "what changed" section; the
    program's own quarterly report is filled in place each time (narrator
    fill), so it too says what changed. Returns the outcomes in build order.
    """
    from narrator.places.fill import fill_document
    from narrator.recipe import build_recipe, load_recipe, recipe_collection

    folder = Path(folder)
    write_examples(folder)
    outcomes = []

    def fill_quarterly(recipe) -> None:
        outcomes.append(fill_document(
            folder / QUARTERLY_REPORT, recipe_collection(recipe, step=step), locale=recipe.report.locale,
            currency=recipe.report.currency, generated_at=recipe.report.generated,
            protect=(recipe.data.path, recipe.source)))

    for name in RECIPES:
        recipe_path = folder / f"{name}.toml"
        if name == "housing":
            recipe = load_recipe(recipe_path)
            outcomes.extend(build_recipe(recipe, step=step))
            fill_quarterly(recipe)
            atomic_write_bytes(folder / "housing_waits.csv", data_files()["housing_waits_2026-11.csv"])
        outcomes.extend(build_recipe(load_recipe(recipe_path), step=step))
        if name == "housing":
            fill_quarterly(load_recipe(recipe_path))
    return outcomes
