"""Spreadsheet GET endpoints: exactly the URLs the README shows, bare numbers, CSV, caching."""

from __future__ import annotations

import csv
import io
import math
import re
from pathlib import Path

import pytest
from fastapi.testclient import TestClient

README = (Path(__file__).resolve().parents[2] / "README.md").read_text(encoding="utf-8")
# Every spreadsheet URL the README shows, on a line of its own inside a code block.
URLS = re.findall(r"http://127\.0\.0\.1:8000(/v1/sheet/[^\s\"'<>]+)", README)


def test_readme_shows_spreadsheet_urls() -> None:
    assert len(URLS) >= 3
    for url in URLS:
        assert len("http://127.0.0.1:8000" + url) < 2000  # desktop spreadsheet URL limit


@pytest.mark.parametrize("url", URLS)
def test_readme_urls_answer(client: TestClient, url: str) -> None:
    r = client.get(url)
    assert r.status_code == 200, r.text
    if ".txt" in url:
        assert r.headers["content-type"].startswith("text/plain")
        assert re.fullmatch(r"-?[0-9]+(\.[0-9]+)?(e[-+]?[0-9]+)?", r.text), r.text
        assert math.isfinite(float(r.text))
    else:
        assert r.headers["content-type"].startswith("text/csv")
        rows = list(csv.reader(io.StringIO(r.text)))
        assert len(rows) > 2
        assert all(len(row) == len(rows[0]) for row in rows)


BASE = (
    "/v1/sheet/inrush/peak.txt?rating_kva=2500&voltage_kv=13.8&connection=delta&position=outer"
    "&impedance_percent=5.75&x_over_r=7&no_load_current_percent=0.8&fault_mva=250"
    "&source_x_over_r=12"
)


def test_number_matches_the_json_operation(client: TestClient) -> None:
    from service.examples import PEAK_REQUESTS

    text = client.get(BASE + "&quantity=worst_peak_x_rated").text
    body = client.post("/v1/inrush/peak", json=PEAK_REQUESTS["northgate_main_unit"]).json()
    assert float(text) == body["worst_case_simulated"]["peak_x_rated"]


def test_etag_and_not_modified(client: TestClient) -> None:
    r = client.get(BASE + "&quantity=first_peak_a")
    assert r.headers["cache-control"].startswith("public")
    again = client.get(
        BASE + "&quantity=first_peak_a", headers={"if-none-match": r.headers["etag"]}
    )
    assert again.status_code == 304
    assert again.text == ""


def test_bad_query_names_the_parameter(client: TestClient) -> None:
    r = client.get(BASE.replace("rating_kva=2500", "rating_kva=lots") + "&quantity=first_peak_a")
    assert r.status_code == 422
    assert r.headers["content-type"].startswith("application/problem+json")
    assert r.json()["errors"][0]["field"] == "rating_kva"
    r = client.get(BASE + "&quantity=first_peak_a&ratingkva=1")
    assert r.status_code == 422
    assert r.json()["errors"][0]["field"] == "ratingkva"


def test_nan_in_query_rejected(client: TestClient) -> None:
    r = client.get(BASE.replace("x_over_r=7", "x_over_r=nan") + "&quantity=first_peak_a")
    assert r.status_code == 422


LIGHTING = (
    "rating_kva=112.5&voltage_kv=0.48&connection=delta&position=outer&impedance_percent=4.5"
    "&x_over_r=2&no_load_current_percent=1.5"
)


@pytest.mark.parametrize("phases", ["1", "3"])
def test_phases_from_the_query_string(client: TestClient, phases: str) -> None:
    # the real query string: "phases=3" arrives as text and must be taken as the integer 3
    r = client.get(f"/v1/sheet/inrush/peak.txt?{LIGHTING}&phases={phases}&quantity=rated_current_a")
    assert r.status_code == 200, r.text
    # rated line current S/(sqrt(3)*V) for three phases, S/V for one (IEEE C57.12.00 bases)
    expected = 112_500 / (math.sqrt(3) * 480) if phases == "3" else 112_500 / 480
    assert float(r.text) == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize("phases", ["2", "three", "3.0"])
def test_other_phases_are_422(client: TestClient, phases: str) -> None:
    r = client.get(f"/v1/sheet/inrush/peak.txt?{LIGHTING}&phases={phases}&quantity=rated_current_a")
    assert r.status_code == 422
    assert r.json()["errors"][0]["field"] == "phases"


def test_ieq_time_beyond_the_given_duration_is_422(client: TestClient) -> None:
    r = client.get(f"/v1/sheet/inrush/ieq.txt?{LIGHTING}&time_s=0.5&duration_s=0.2")
    assert r.status_code == 422
    err = r.json()["errors"][0]
    assert err["field"] == "time_s"
    assert err["value"] == "0.5"
    assert err["allowed"] == ">= 0.01, <= 0.2"


def test_ieq_between_table_times_is_answered(client: TestClient) -> None:
    # 0.3 s lies between the tabulated 0.2 s and 0.5 s: a duration of 0.3 s used to leave the
    # table short of it and the cell empty
    url = f"/v1/sheet/inrush/ieq.txt?{LIGHTING}&time_s=0.3&unit=a"
    short = client.get(url + "&duration_s=0.3")
    long = client.get(url + "&duration_s=2")
    assert short.status_code == 200
    assert short.text != ""
    # I_eq(0.3 s) does not depend on how long the simulation runs past it (causality)
    assert float(short.text) == float(long.text)


def test_ieq_cell_is_the_json_envelope_value(client: TestClient) -> None:
    # One computation: the cell is the JSON envelope's I_eq(t) for the same case, to the last
    # digit, at a table time (0.01 s, 0.1 s); before, the sheet sampled 64 per cycle and
    # interpolated its table in log(t) (445.52 against 445.72 A on a 12.47 kV delta).
    case = (
        "rating_kva=1500&voltage_kv=12.47&connection=delta&position=outer&impedance_percent=5.75"
        "&x_over_r=7&fault_mva=250&source_x_over_r=12"
    )
    body = {
        "transformer": {
            "rating_kva": 1500, "phases": 3, "frequency_hz": 60.0,
            "energized_winding": {"voltage_kv": 12.47, "connection": "delta", "position": "outer"},
            "impedance_percent": 5.75, "x_over_r": 7, "no_load_current_percent": 1.0,
            "core": {"material": "grain_oriented"},
        },
        "switching": {"closing_angle_deg": 0.0},
        "source": {"kind": "fault_level", "fault_mva": 250, "x_over_r": 12},
    }  # fmt: skip
    env = client.post("/v1/inrush/envelope", json=body).json()
    times = env["equivalent_rms_times_s"]
    for t in (0.01, 0.1):
        k = times.index(t)
        for line in env["lines"]:
            cell = client.get(
                f"/v1/sheet/inrush/ieq.txt?{case}&time_s={t}&line={line['line']}&unit=a"
            ).text
            assert float(cell) == line["equivalent_rms_a"][k]
    # a time off the table is computed there, not interpolated: I_eq is continuous, so the
    # value at 0.0101 s lies within a fraction of a per cent of the 0.01 s one
    near = float(client.get(f"/v1/sheet/inrush/ieq.txt?{case}&time_s=0.0101&line=A&unit=a").text)
    assert near == pytest.approx(env["lines"][0]["equivalent_rms_a"][0], rel=0.02)
