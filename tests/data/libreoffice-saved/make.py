"""How calibration.xlsx was made: this workbook written by openpyxl, then opened and saved by LibreOffice Calc
(headless, its own profile), so that the file is stored the way LibreOffice stores it (lower-case names
of functions it does not know, #NAME? values, its own row attributes and shared strings).

    python make.py && soffice --headless --convert-to xlsx:"Calc MS Excel 2007 XML" --outdir saved source.xlsx
    mv saved/source.xlsx calibration.xlsx

The data are invented: a run of 12 standards in duplicate, two sample readings.
"""

import openpyxl

X = [0.5, 0.5, 1, 1, 2, 2, 5, 5, 10, 10, 20, 20]
Y = [0.061, 0.058, 0.118, 0.121, 0.242, 0.239, 0.601, 0.596, 1.197, 1.204, 2.388, 2.402]
READINGS = [0.75, 1.5]

if __name__ == "__main__":
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Run 12"
    ws["A1"], ws["B1"] = "conc", "signal"
    for i, (x, y) in enumerate(zip(X, Y), start=2):
        ws.cell(i, 1, x)
        ws.cell(i, 2, y)
    ws["D1"] = "=CALIB_ORDER(A2:A13,B2:B13)"
    ws["D3"] = "=CALIB_COEFS(A2:A13,B2:B13,D1)"
    ws["L8"], ws["L9"] = READINGS
    ws["D8"] = "=CALIB_INVERSE(A2:A13,B2:B13,L8:L9)"
    wb.create_sheet("Notes")["A1"] = "prepared by the night shift"
    wb.save("source.xlsx")
