#!/usr/bin/python3
"""The demo's office step: opens a sample workbook in a headless LibreOffice with the
weft add-in installed (tests/calc/office.py), recalculates it, stores the result as
.ods and as PDF, and writes the first-difference estimates table (or the workbook's
named range demo_table, when it has one) as aligned text.

    /usr/bin/python3 scripts/demo_sheet.py --oxt build/addin/weft.oxt \
        --workbook sample-sheets/branch-service-costs.fods \
        --ods out/demo/x.ods --pdf out/demo/x.pdf --table out/demo/x.txt
"""

import argparse
import os
import sys

REPO = os.path.normpath(os.path.join(os.path.dirname(os.path.abspath(__file__)), ".."))
sys.path.insert(0, os.path.join(REPO, "tests", "calc"))

from office import Office  # noqa: E402


def fmt(v):
    if isinstance(v, float):
        if v != 0 and (abs(v) < 1e-3 or abs(v) >= 1e6):
            return f"{v:.3e}"
        return f"{v:.4f}"
    return "" if v is None else str(v)


def table_text(rows):
    cells = [[fmt(v) for v in r] for r in rows]
    widths = [max(len(r[c]) for r in cells) for c in range(len(cells[0]))]
    lines = []
    for i, r in enumerate(cells):
        parts = [r[0].ljust(widths[0])] + [r[c].rjust(widths[c]) for c in range(1, len(r))]
        lines.append("  " + "  ".join(parts))
        if i == 0:
            lines.append("  " + "  ".join("-" * w for w in widths))
    return "\n".join(lines)


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--oxt", required=True)
    ap.add_argument("--workbook", required=True)
    ap.add_argument("--ods", required=True)
    ap.add_argument("--pdf", required=True)
    ap.add_argument("--table", required=True)
    args = ap.parse_args()
    with Office(extensions=[args.oxt], timeout=300) as office:
        doc = office.load_copy(args.workbook)
        doc.calculateAll()
        # The office runs as an unprivileged user when we are root: let it write into
        # its own work folder, then copy the files out.
        work = office.work_dir
        office.save_as(doc, os.path.join(work, "out.ods"), "calc8")
        office.save_as(doc, os.path.join(work, "out.pdf"), "calc_pdf_Export")
        # the workbook's own table for the demo, else its first-difference estimates
        table = "demo_table" if doc.NamedRanges.hasByName("demo_table") else "fd_estimates"
        est = doc.NamedRanges.getByName(table).getReferredCells().getDataArray()
        bad = []
        for i in range(doc.Sheets.getCount()):
            sheet = doc.Sheets.getByIndex(i)
            errs = sheet.queryFormulaCells(4)  # FormulaResult.ERROR
            if errs.getCount():
                bad.append(errs.getRangeAddressesAsString())
        reading = doc.NamedRanges.getByName("reading").getReferredCells().getDataArray()
        doc.close(True)
        for src, dst in (("out.ods", args.ods), ("out.pdf", args.pdf)):
            with open(os.path.join(work, src), "rb") as f, open(dst, "wb") as g:
                g.write(f.read())
    with open(args.table, "w") as f:
        f.write(table_text(est) + "\n\n")
        f.write("Reading (from the workbook's own formulas):\n")
        for (line,) in reading:
            f.write("  - " + str(line) + "\n")
    print(f"stored {args.ods} and {args.pdf}")
    if bad:
        print("cells with error values: " + "; ".join(bad), file=sys.stderr)
        return 1
    return 0


if __name__ == "__main__":
    sys.exit(main())
