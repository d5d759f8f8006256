"""A real spreadsheet engine calls the live service: LibreOffice Calc, headless.

The test writes one flat-ODF spreadsheet (.fods, plain XML) whose cells hold the README's sheet
URLs and the README's formula ``=NUMBERVALUE(WEBSERVICE(A1), ".")``, plus cells that compute
with the answers (a verdict from a margin, a peak in amperes from a multiple of rated current).
LibreOffice recalculates it against the live uvicorn server and writes CSV; every cell is
checked against the JSON operations' answers for the same cases.

How LibreOffice is made to fetch (LibreOffice 7.4, Debian 12; read from its source,
sc/source/ui/docshell/docsh4.cxx and desktop/source/app/dispatchwatcher.cxx):

* In ODF a cell writes the function as ``COM.MICROSOFT.WEBSERVICE`` with ``;`` between
  arguments; plain ``WEBSERVICE`` there is ``#NAME?``.
* ``soffice --headless --convert-to csv`` cannot do it: the conversion loads the document without
  an ``UpdateDocMode``, which Calc takes as "never update links", so every WEBSERVICE cell is
  ``Err:540`` ("external content disabled") whatever the document or profile settings say.
* What works: a Basic macro in a throw-away user profile loads the document with
  ``UpdateDocMode = FULL_UPDATE``, calls ``calculateAll()`` and stores CSV. FULL_UPDATE still
  asks for a trusted location (otherwise the links wait for a click on an info bar that a
  headless run never shows: Err:540 again), so the profile lists the test's directory under
  ``Security/Scripting/SecureURL``; macro security is left as it is. The profile is initialised
  once (``--terminate_after_init``) before the macro is written, because a first start replaces
  the user's Basic library with the default one.

CI installs Debian's ``libreoffice-calc`` (.ci/run) and sets CI=true, so there the test must run;
elsewhere it is skipped when ``soffice`` is absent.
"""

from __future__ import annotations

import csv
import json
import math
import os
import re
import shutil
import subprocess
import urllib.request
from pathlib import Path
from typing import Any
from xml.sax.saxutils import escape, quoteattr

import pytest

from service.examples import CLEARANCE_REQUESTS, DIP_REQUESTS, PEAK_REQUESTS, SHEET_REQUESTS

SOFFICE = shutil.which("soffice") or shutil.which("libreoffice")
pytestmark = pytest.mark.skipif(
    SOFFICE is None and not os.environ.get("CI"), reason="no LibreOffice on this machine"
)
README = (Path(__file__).resolve().parents[2] / "README.md").read_text(encoding="utf-8")
README_BASE = "http://127.0.0.1:8000"


def _readme_formula() -> str:
    """The README's cell formula for a URL in A1, as the README shows it."""
    m = re.search(r"^(=NUMBERVALUE\(WEBSERVICE\(A1\), \"\.\"\))$", README, re.MULTILINE)
    assert m, 'the README\'s spreadsheet section must show =NUMBERVALUE(WEBSERVICE(A1), ".")'
    return m.group(1)


def _odf(formula: str, row: int) -> str:
    """An A1-style formula of row 1 in ODF's syntax for the cell in ``row``."""
    return "of:" + (
        formula.replace("WEBSERVICE(", "COM.MICROSOFT.WEBSERVICE(")
        .replace("A1", f"[.A{row}]")
        .replace(", ", ";")
    )


def _post(base: str, path: str, body: dict[str, Any]) -> Any:
    req = urllib.request.Request(
        base + path, json.dumps(body).encode(), {"Content-Type": "application/json"}
    )
    with urllib.request.urlopen(req, timeout=600) as r:
        return json.load(r)


def _fods(rows: list[tuple[str, str]]) -> str:
    """A one-sheet flat ODF spreadsheet: column A text, column B a formula (ODF syntax)."""
    cells = []
    for text, formula in rows:
        a = (
            f'<table:table-cell office:value-type="string"><text:p>{escape(text)}</text:p>'
            "</table:table-cell>"
        )
        b = f"<table:table-cell table:formula={quoteattr(formula)}/>"
        cells.append(f"<table:table-row>{a}{b}</table:table-row>")
    return (
        '<?xml version="1.0" encoding="UTF-8"?>\n'
        '<office:document xmlns:office="urn:oasis:names:tc:opendocument:xmlns:office:1.0" '
        'xmlns:table="urn:oasis:names:tc:opendocument:xmlns:table:1.0" '
        'xmlns:text="urn:oasis:names:tc:opendocument:xmlns:text:1.0" '
        'xmlns:of="urn:oasis:names:tc:opendocument:xmlns:of:1.2" office:version="1.2" '
        'office:mimetype="application/vnd.oasis.opendocument.spreadsheet">'
        '<office:body><office:spreadsheet><table:table table:name="cells">'
        + "".join(cells)
        + "</table:table></office:spreadsheet></office:body></office:document>\n"
    )


_MACRO = """<?xml version="1.0" encoding="UTF-8"?>
<!DOCTYPE script:module PUBLIC "-//OpenOffice.org//DTD OfficeDocument 1.0//EN" "module.dtd">
<script:module xmlns:script="http://openoffice.org/2000/script" script:name="Module1"
 script:language="StarBasic">
Sub Recalculate
  Dim load(1) As New com.sun.star.beans.PropertyValue
  load(0).Name = "Hidden" : load(0).Value = True
  load(1).Name = "UpdateDocMode"
  load(1).Value = com.sun.star.document.UpdateDocMode.FULL_UPDATE
  doc = StarDesktop.loadComponentFromURL("{source}", "_blank", 0, load())
  doc.calculateAll()
  Dim store(1) As New com.sun.star.beans.PropertyValue
  store(0).Name = "FilterName" : store(0).Value = "Text - txt - csv (StarCalc)"
  REM comma, double quote, UTF-8, from line 1, cell values in full rather than as shown
  store(1).Name = "FilterOptions" : store(1).Value = "44,34,76,1,,1033,false,false,false"
  doc.storeToURL("{target}", store())
  doc.close(True)
  StarDesktop.terminate()
End Sub
</script:module>
"""


def _recalculate(soffice: str, tmp: Path, fods: Path) -> list[list[str]]:
    profile = tmp / "profile"
    env_arg = f"-env:UserInstallation={profile.as_uri()}"
    common = [soffice, env_arg, "--headless", "--norestore", "--nologo"]
    subprocess.run([*common, "--terminate_after_init"], check=True, timeout=180)
    reg = profile / "user" / "registrymodifications.xcu"
    trusted = (
        '<item oor:path="/org.openoffice.Office.Common/Security/Scripting">'
        f'<prop oor:name="SecureURL" oor:op="fuse"><value><it>{tmp.as_uri()}</it></value>'
        "</prop></item>\n</oor:items>"
    )
    reg.write_text(reg.read_text(encoding="utf-8").replace("</oor:items>", trusted), "utf-8")
    out = tmp / "cells.csv"
    module = profile / "user" / "basic" / "Standard" / "Module1.xba"
    module.write_text(
        _MACRO.replace("{source}", fods.as_uri()).replace("{target}", out.as_uri()), "utf-8"
    )
    macro = "vnd.sun.star.script:Standard.Module1.Recalculate?language=Basic&location=application"
    subprocess.run([*common, macro], check=True, timeout=300)
    with out.open(encoding="utf-8", newline="") as f:
        return list(csv.reader(f))


def test_libreoffice_cells_equal_the_json_answers(live_server: str, tmp_path: Path) -> None:
    assert SOFFICE is not None, "CI must install Debian's libreoffice-calc (.ci/run)"
    # the JSON answers first: they also compile the kernels in the server, so no cell waits
    peak = _post(live_server, "/v1/inrush/peak", PEAK_REQUESTS["northgate_main_unit"])
    clearance = _post(live_server, "/v1/clearance", CLEARANCE_REQUESTS["northgate_main_unit"])
    fuse = next(d for d in clearance["devices"] if d["kind"] == "fuse")
    dip = _post(live_server, "/v1/generator-dip", DIP_REQUESTS["northgate_backfeed"])

    readme_urls = re.findall(
        re.escape(README_BASE) + r"(/v1/sheet/[^\s\"'<>]+\.txt\?[^\s\"'<>]+)", README
    )
    peak_url = next(u for u in readme_urls if "quantity=worst_peak_x_rated" in u)
    fuse_url = next(u for u in readme_urls if "ride-through.txt" in u)
    dip_url = next(u for u in readme_urls if "dip.txt" in u)
    rated_url = peak_url.replace("quantity=worst_peak_x_rated", "quantity=rated_current_a")
    relay_url = SHEET_REQUESTS["northgate_feeder_relay"][1]  # quantity=verdict: a word
    formula = _readme_formula()
    rows = [
        (live_server + peak_url, _odf(formula, 1)),
        (live_server + rated_url, _odf(formula, 2)),
        (live_server + fuse_url, _odf(formula, 3)),
        (live_server + dip_url, _odf(formula, 4)),
        (live_server + relay_url, "of:=COM.MICROSOFT.WEBSERVICE([.A5])"),
        # computing with the answers, as a sheet's owner would
        ("peak in amperes", "of:=[.B1]*[.B2]"),
        ("fuse verdict", 'of:=IF([.B3]>1;"rides through";"melts")'),
        ("dip within 20 %", 'of:=IF([.B4]<=20;"yes";"no")'),
    ]
    fods = tmp_path / "cells.fods"
    fods.write_text(_fods(rows), encoding="utf-8")
    cells = [row[1] for row in _recalculate(SOFFICE, tmp_path, fods)]
    assert not any(c.startswith(("Err:", "#")) for c in cells), cells

    # LibreOffice writes a cell's value to 15 significant digits at most (the CSV export of a
    # double), so the numbers agree to that, not to the JSON's 17
    def close(cell: str, expected: float) -> None:
        assert math.isclose(float(cell), expected, rel_tol=1e-14), (cell, expected)

    worst = peak["worst_case_simulated"]
    close(cells[0], worst["peak_x_rated"])
    close(cells[1], peak["rated_current_a"])
    close(cells[2], fuse["ride_through"]["margin_ratio"])
    close(cells[3], dip["dip_percent"])
    relay = next(d for d in clearance["devices"] if d["kind"] == "relay")
    assert cells[4] == ("trips" if relay["ride_through"]["trips"] else "rides_through")
    # the sheet's own product: x_rated times the rated current is the peak in amperes
    close(cells[5], worst["peak_a"])
    assert cells[6] == ("rides through" if fuse["ride_through"]["margin_ratio"] > 1 else "melts")
    assert cells[7] == ("yes" if dip["dip_percent"] <= 20 else "no")
