"""Recalculates plumb's prediction calculators with an independent formula
engine (LibreOffice Calc, headless) and compares them with plumb's own
#predict figures.

For every fit that has both a #predict table and a prediction calculator on
the Intervals sheet, the calculator's input cells are set to the first
point of the table (and its confidence level), every cached formula value
of the sheet is removed, and LibreOffice, with recalculation on load forced,
converts the workbook. The recalculated predicted value and interval bounds
must equal plumb's to 1e-9 relative. The same holds for every kind of
calculator: a predictor linear in its coefficients (term values), a model
formula (the model and its gradient written live), and a link other than the
identity (a linear predictor row first, no prediction interval: only the rows
a calculator has are compared).

Usage: python3 tests/calculator_recalc.py OUTPUT.xlsx
Needs: soffice (apt-get install libreoffice-calc-nogui) and openpyxl.
"""
import os
import re
import shutil
import subprocess
import sys
import tempfile
import zipfile
from xml.sax.saxutils import escape

import openpyxl

RESULTS = ["Predicted value", "Confidence interval: from", "Confidence interval: to", "Prediction interval: from", "Prediction interval: to"]

PROFILE = """<?xml version="1.0" encoding="UTF-8"?>
<oor:items xmlns:oor="http://openoffice.org/2001/registry" xmlns:xs="http://www.w3.org/2001/XMLSchema" xmlns:xsi="http://www.w3.org/2001/XMLSchema-instance">
<item oor:path="/org.openoffice.Office.Calc/Formula/Load"><prop oor:name="OOXMLRecalcMode" oor:op="fuse"><value>0</value></prop></item>
<item oor:path="/org.openoffice.Office.Calc/Formula/Load"><prop oor:name="ODFRecalcMode" oor:op="fuse"><value>0</value></prop></item>
</oor:items>
"""


def sheet_part(z, name):
    """The zip path of the worksheet called name."""
    wb = z.read("xl/workbook.xml").decode()
    rels = z.read("xl/_rels/workbook.xml.rels").decode()
    rid = re.search(r'<sheet name="%s" sheetId="\d+" [^>]*?r:id="([^"]+)"' % re.escape(escape(name)), wb).group(1)
    target = re.search(r'Id="%s"[^>]*Target="([^"]+)"' % re.escape(rid), rels) or re.search(r'Target="([^"]+)"[^>]*Id="%s"' % re.escape(rid), rels)
    return "xl/" + target.group(1).lstrip("/").replace("xl/", "")


def find_checks(ws):
    """(fit, inputs {cell: value}, level cell, level, result cells {label: cell}, want {label: value}) per fit."""
    rows = list(ws.iter_rows())
    cell_text = lambda r: r[0].value if r and isinstance(r[0].value, str) else ""
    tables = {}
    for i, r in enumerate(rows):
        t = cell_text(r)
        if t.startswith("Predictions — "):
            m = re.match(r"From the fit (.+?) of .*, at level ([0-9.]+):", cell_text(rows[i + 1]))
            fit, level = m.group(1), float(m.group(2))
            head = [c.value for c in rows[i + 2]]
            first = [c.value for c in rows[i + 3]]
            k = head.index("Predicted value")
            point = dict(zip(head[:k], first[:k]))
            want = dict(zip(RESULTS, first[k:k + 5]))
            tables.setdefault(fit, (point, level, want))
    checks = []
    for i, r in enumerate(rows):
        t = cell_text(r)
        m = re.match(r"Prediction calculator — (.+?): ", t)
        if not m or m.group(1) not in tables:
            continue
        fit = m.group(1)
        point, level, want = tables[fit]
        inputs, results, level_cell = {}, {}, None
        j = i + 3
        while cell_text(rows[j]) != "Confidence level":
            inputs[rows[j][1].coordinate] = point[rows[j][0].value]
            j += 1
        level_cell = rows[j][1].coordinate
        # The result rows run to the term table's header ("Term"): ten for
        # least squares, fewer with a link (no prediction interval, a
        # linear predictor row first) or without degrees of freedom.
        for r2 in rows[j + 1:]:
            if cell_text(r2) == "Term":
                break
            if cell_text(r2) in RESULTS:
                results[cell_text(r2)] = r2[1].coordinate
        checks.append((fit, inputs, level_cell, level, results, want))
    return checks


def set_cell(xml, ref, value):
    """Replaces the cell ref (keeping its style) with a number or inline text."""
    pat = re.compile(r'<c r="%s"( s="\d+")?[^>]*?(/>|>.*?</c>)' % ref, re.S)
    m = pat.search(xml)
    assert m, f"no cell {ref}"
    style = m.group(1) or ""
    if isinstance(value, str):
        new = f'<c r="{ref}"{style} t="inlineStr"><is><t>{escape(value)}</t></is></c>'
    else:
        new = f'<c r="{ref}"{style}><v>{repr(float(value))}</v></c>'
    return xml[:m.start()] + new + xml[m.end():]


def main(path):
    src = openpyxl.load_workbook(path)
    checks = find_checks(src["Intervals"])
    assert checks, "no fit has both a #predict table and a calculator"
    work = tempfile.mkdtemp(prefix="plumb-recalc-")
    try:
        edited = os.path.join(work, "edited.xlsx")
        with zipfile.ZipFile(path) as z:
            part = sheet_part(z, "Intervals")
            xml = z.read(part).decode()
            for _, inputs, level_cell, level, _, _ in checks:
                for ref, v in inputs.items():
                    xml = set_cell(xml, ref, v)
                xml = set_cell(xml, level_cell, level)
            # No cached formula value survives: whatever is read back was computed by LibreOffice.
            xml, stripped = re.subn(r"(<f>[^<]*</f>)<v>[^<]*</v>", r"\1", xml)
            with zipfile.ZipFile(edited, "w", zipfile.ZIP_DEFLATED) as out:
                for item in z.infolist():
                    out.writestr(item, xml if item.filename == part else z.read(item.filename))
        profile = os.path.join(work, "profile")
        os.makedirs(os.path.join(profile, "user"))
        with open(os.path.join(profile, "user", "registrymodifications.xcu"), "w") as f:
            f.write(PROFILE)
        outdir = os.path.join(work, "out")
        subprocess.run(["soffice", f"-env:UserInstallation=file://{profile}", "--headless", "--convert-to", "xlsx", "--outdir", outdir, edited],
                       check=True, capture_output=True, timeout=300)
        calc = openpyxl.load_workbook(os.path.join(outdir, "edited.xlsx"), data_only=True)["Intervals"]
        n = 0
        for fit, inputs, _, level, results, want in checks:
            for label, ref in results.items():
                got, w = calc[ref].value, want[label]
                assert isinstance(got, (int, float)), f"{fit}: {label} at {ref} is {got!r} after recalculation"
                rel = abs(got - w) / max(abs(w), 1e-300)
                assert rel < 1e-9, f"{fit}: {label} recalculated {got}, plumb's #predict {w} (relative {rel:.1e})"
                n += 1
            print(f"calculator of {fit} at {inputs} (level {level}): LibreOffice agrees with #predict")
        print(f"calculator recalculation: {n} figures of {len(checks)} calculators within 1e-9 ({stripped} cached values removed first): ok")
    finally:
        shutil.rmtree(work, ignore_errors=True)


if __name__ == "__main__":
    main(sys.argv[1])
