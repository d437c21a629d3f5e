"""Opens a plumb output workbook with an independent reader (openpyxl, from
PyPI) and checks what a colleague would see: every sheet present, the
request cells replaced by outcomes (the deliberate typo shown as an error),
residual columns beside the data, the About sheet tracing the input by its
SHA-256, and valid document properties.

Usage: python3 tests/independent_reader.py INPUT.xlsx OUTPUT.xlsx
"""
import hashlib
import sys

import openpyxl


def main(inp, out):
    wb = openpyxl.load_workbook(out)
    src = openpyxl.load_workbook(inp)
    want = src.sheetnames + ["Fits", "Coefficients", "Intervals", "Diagnostics", "Comparisons", "Charts", "Guide", "About"]
    assert wb.sheetnames == want, f"sheets {wb.sheetnames}, expected {want}"
    assert wb.properties.created is not None, "no creation time"
    requests = []
    for ws in src.worksheets:
        for row in ws.iter_rows():
            for c in row:
                if isinstance(c.value, str) and c.value.lstrip().startswith("#") and "(" in c.value:
                    requests.append((ws.title, c.coordinate, c.value))
    assert requests, "the input has no requests"
    errors = 0
    for sheet, coord, text in requests:
        shown = wb[sheet][coord].value
        if text.lstrip().lower().startswith("#predict(") and isinstance(shown, float):
            # A one-point prediction shows the predicted value itself, with the request in its note.
            assert wb[sheet][coord].comment is not None and text.strip() in wb[sheet][coord].comment.text, f"{sheet}!{coord} has no note"
            continue
        assert isinstance(shown, str) and shown != text, f"{sheet}!{coord} still shows the request"
        assert wb[sheet][coord].hyperlink is not None, f"{sheet}!{coord} has no link"
        if "error" in shown:
            errors += 1
            assert "Ligth" in text, f"unexpected failure at {sheet}!{coord}: {shown}"
    assert errors == 1, f"{errors} requests failed; the demo has exactly one deliberate typo"
    headers = [c.value for c in wb[requests[0][0]][1]]
    assert any(isinstance(h, str) and h.startswith("Fitted (") for h in headers), headers
    about = {r[0].value: r[1].value for r in wb["About"].iter_rows(min_row=2, max_row=6)}
    sha = hashlib.sha256(open(inp, "rb").read()).hexdigest()
    assert about["Input SHA-256"] == sha, about
    coef = wb["Coefficients"]
    assert [c.value for c in coef[1]][:9] == ["Fit", "Term", "Estimate", "Standard error", "Level", "Confidence interval: from", "Confidence interval: to", "t statistic", "p-value"]
    assert coef.freeze_panes == "A2" and coef.auto_filter.ref
    n = sum(1 for r in coef.iter_rows(min_row=2) if isinstance(r[2].value, float))
    print(f"independent reader: {len(wb.sheetnames)} sheets, {len(requests)} requests ({errors} deliberate error), {n} coefficients: ok")


if __name__ == "__main__":
    main(sys.argv[1], sys.argv[2])
