"""Sort the Entry sheet of a workbook in LibreOffice, as a technician would,
and save the sorted copy as .xlsx.

Used by TestLibreOfficeSort (design/workbook); needs LibreOffice and its
Python bridge (Debian: libreoffice-calc-nogui, python3-uno). Run with the
system Python:

    /usr/bin/python3 lo_sort.py SRC.xlsx DST.xlsx PROFILE_DIR COLUMN

COLUMN is the 0-based column to sort by, descending, the header row kept.
"""
import os
import subprocess
import sys
import time

import uno
from com.sun.star.beans import PropertyValue
from com.sun.star.table import TableSortField


def prop(name, value):
    return PropertyValue(name, 0, value, 0)


def main():
    src, dst, profile, column = sys.argv[1], sys.argv[2], sys.argv[3], int(sys.argv[4])
    pipe = "allot_sort_%d" % os.getpid()
    office = subprocess.Popen(["soffice", "--headless", "--norestore", "--nologo", "--nodefault",
                               "-env:UserInstallation=" + uno.systemPathToFileUrl(profile),
                               "--accept=pipe,name=%s;urp;" % pipe],
                              stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    try:
        local = uno.getComponentContext()
        resolver = local.ServiceManager.createInstanceWithContext("com.sun.star.bridge.UnoUrlResolver", local)
        ctx = None
        for _ in range(240):
            try:
                ctx = resolver.resolve("uno:pipe,name=%s;urp;StarOffice.ComponentContext" % pipe)
                break
            except Exception:
                time.sleep(0.5)
        if ctx is None:
            sys.exit("could not connect to LibreOffice")
        desktop = ctx.ServiceManager.createInstanceWithContext("com.sun.star.frame.Desktop", ctx)
        doc = desktop.loadComponentFromURL(uno.systemPathToFileUrl(src), "_blank", 0, (prop("Hidden", True),))
        sheet = doc.Sheets.getByName("Entry")
        cursor = sheet.createCursor()
        cursor.gotoEndOfUsedArea(False)
        end = cursor.getRangeAddress()
        rng = sheet.getCellRangeByPosition(0, 0, end.EndColumn, end.EndRow)
        field = TableSortField()
        field.Field = column
        field.IsAscending = False
        fields = uno.Any("[]com.sun.star.table.TableSortField", (field,))
        desc = (prop("SortFields", fields), prop("ContainsHeader", True))
        uno.invoke(rng, "sort", (desc,))
        doc.storeToURL(uno.systemPathToFileUrl(dst), (prop("FilterName", "Calc MS Excel 2007 XML"),))
        doc.close(True)
        try:
            desktop.terminate()
        except Exception:
            pass
    finally:
        try:
            office.wait(timeout=60)
        except subprocess.TimeoutExpired:
            office.kill()


if __name__ == "__main__":
    main()
