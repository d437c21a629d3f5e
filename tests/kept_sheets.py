"""The user's sheets, exactly, as an independent reader sees them.

Usage: python3 tests/kept_sheets.py INPUT.xlsx OUTPUT.xlsx

openpyxl (PyPI, 3.1.5) reads the input and plumb's output; for every sheet
of the input, every cell the input has (value, font, fill, border, number
format, alignment, protection) and every sheet setting openpyxl reads
(column widths and hidden columns, row heights and hidden rows, merged
cells, frozen panes, conditional formats, drop-down lists, notes, images,
charts, the filter, print setup, header and footer, tab colour) must be
equal, except the request cells plumb fills with their outcome. The
defined names and document properties must be kept. Then LibreOffice
(headless) opens the output and saves it again as xlsx, and openpyxl reads
that copy: the output opens without a repair.
"""

import os
import shutil
import subprocess
import sys
import tempfile

import openpyxl


def style_of(c):
    return (c.font.b, c.font.i, c.font.sz, c.font.color.rgb if c.font.color else None, c.fill.fgColor.rgb if c.fill and c.fill.fill_type else None,
            c.border.bottom.style, c.number_format, c.alignment.horizontal, c.alignment.wrap_text)


def main(inp, out):
    a = openpyxl.load_workbook(inp)
    b = openpyxl.load_workbook(out)
    checked = 0
    for ws in a.worksheets:
        wo = b[ws.title]
        requests = {c.coordinate for row in ws.iter_rows() for c in row if isinstance(c.value, str) and c.value.startswith("#")}
        for row in ws.iter_rows():
            for c in row:
                if c.coordinate in requests:
                    continue
                d = wo[c.coordinate]
                assert c.value == d.value, (ws.title, c.coordinate, c.value, d.value)
                assert style_of(c) == style_of(d), (ws.title, c.coordinate, style_of(c), style_of(d))
                checked += 1
        for k, dim in ws.column_dimensions.items():
            o = wo.column_dimensions[k]
            assert (dim.width, dim.hidden) == (o.width, o.hidden), (ws.title, "column", k, dim.width, o.width, dim.hidden, o.hidden)
        for k, dim in ws.row_dimensions.items():
            o = wo.row_dimensions[k]
            assert (dim.height, dim.hidden) == (o.height, o.hidden), (ws.title, "row", k)
        assert sorted(map(str, ws.merged_cells.ranges)) == sorted(map(str, wo.merged_cells.ranges)), ws.title
        assert ws.freeze_panes == wo.freeze_panes, ws.title
        cf = lambda w: sorted((str(r.sqref), [(x.type, x.operator, x.formula) for x in r.rules]) for r in w.conditional_formatting)
        assert cf(ws) == cf(wo), (ws.title, cf(ws), cf(wo))
        dv = lambda w: sorted((str(v.sqref), v.type, v.formula1) for v in w.data_validations.dataValidation)
        assert dv(ws) == dv(wo), (ws.title, dv(ws), dv(wo))
        notes = lambda w, skip: sorted((c.coordinate, c.comment.text) for row in w.iter_rows() for c in row if c.comment and c.coordinate not in skip)
        assert notes(ws, requests) == notes(wo, requests), ws.title
        assert len(ws._images) == len(wo._images), (ws.title, "images")
        assert len(ws._charts) == len(wo._charts), (ws.title, "charts")
        assert ws.auto_filter.ref == wo.auto_filter.ref, ws.title
        assert ws.page_setup.orientation == wo.page_setup.orientation, ws.title
        assert ws.page_setup.fitToHeight == wo.page_setup.fitToHeight and ws.sheet_properties.pageSetUpPr.fitToPage == wo.sheet_properties.pageSetUpPr.fitToPage if ws.sheet_properties.pageSetUpPr else True, ws.title
        assert str(ws.oddHeader.center.text) == str(wo.oddHeader.center.text), ws.title
        assert ws.sheet_properties.tabColor == wo.sheet_properties.tabColor, ws.title
        assert ws.sheet_state == wo.sheet_state, ws.title
    names = lambda w: sorted((n, d.attr_text) for n, d in w.defined_names.items())
    assert names(a) == names(b), (names(a), names(b))
    for ws in a.worksheets:
        local = lambda w: sorted((n, d.attr_text) for n, d in w.defined_names.items())
        assert local(ws) == local(b[ws.title]), ws.title
    assert (a.properties.title, a.properties.creator) == (b.properties.title, b.properties.creator)
    print(f"kept sheets: {len(a.worksheets)} sheets, {checked} cells with their looks, every setting equal")
    soffice = shutil.which("soffice") or shutil.which("libreoffice")
    if soffice is None:
        print("kept sheets: LibreOffice is not installed, so the re-save check is skipped (CI installs it)")
        return
    with tempfile.TemporaryDirectory() as tmp:
        src = os.path.join(tmp, "in.xlsx")
        shutil.copy(out, src)
        outdir = os.path.join(tmp, "saved")
        os.mkdir(outdir)
        r = subprocess.run([soffice, "-env:UserInstallation=file://" + os.path.join(tmp, "profile"), "--headless", "--convert-to", "xlsx", "--outdir", outdir, src], capture_output=True, text=True, timeout=300)
        saved = os.path.join(outdir, "in.xlsx")
        assert r.returncode == 0 and os.path.exists(saved), ("LibreOffice could not open and save the output", r.stdout, r.stderr)
        c = openpyxl.load_workbook(saved)
        assert [s.title for s in c.worksheets][: len(a.worksheets)] == [s.title for s in a.worksheets]
        print("kept sheets: LibreOffice opened the output and saved it again")


if __name__ == "__main__":
    main(sys.argv[1], sys.argv[2])
