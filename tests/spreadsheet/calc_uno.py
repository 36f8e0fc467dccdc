"""Recalculate a spreadsheet in LibreOffice Calc (headless) and save it as CSV.

Run by the system's Python, which has LibreOffice's ``uno`` module (Debian's python3-uno):

    python3 calc_uno.py DOCUMENT OUTPUT.csv PROFILE_DIR PORT

It starts ``soffice --headless`` with its own user profile, loads the document, lets Calc update
its external links (WEBSERVICE cells) as a person does when they open the file and allow the
update, recalculates, and stores the sheet as CSV (UTF-8, full precision, not as shown). The
profile allows link updates (Calc > Content > Update > Link: always) and trusts the document's
folder; a spreadsheet on a desktop asks the user instead.
"""

from __future__ import annotations

import pathlib
import subprocess
import sys
import time

import uno
from com.sun.star.beans import PropertyValue

#: UpdateDocMode FULL_UPDATE (com.sun.star.document.UpdateDocMode).
FULL_UPDATE = 3
#: CSV export: comma, double quote, UTF-8 (76), from line 1, default cell format and language, plain
#: fields, detect special numbers, values at full precision rather than as shown.
CSV_OPTIONS = "44,34,76,1,,0,false,true,false,false"
PROFILE = """<?xml version="1.0" encoding="UTF-8"?>
<oor:items xmlns:oor="http://openoffice.org/2001/registry" xmlns:xs="http://www.w3.org/2001/XMLSchema"
 xmlns:xsi="http://www.w3.org/2001/XMLSchema-instance">
<item oor:path="/org.openoffice.Office.Calc/Content/Update">
 <prop oor:name="Link" oor:op="fuse"><value>0</value></prop></item>
<item oor:path="/org.openoffice.Office.Common/Security/Scripting">
 <prop oor:name="SecureURL" oor:op="fuse"><value><it>{folder}</it></value></prop></item>
</oor:items>
"""


def _property(name, value):
    prop = PropertyValue()
    prop.Name, prop.Value = name, value
    return prop


def main(document: str, output: str, profile: str, port: str) -> int:
    document_path, profile_path = pathlib.Path(document).resolve(), pathlib.Path(profile).resolve()
    (profile_path / "user").mkdir(parents=True, exist_ok=True)
    (profile_path / "user" / "registrymodifications.xcu").write_text(
        PROFILE.format(folder=document_path.parent.as_uri()), encoding="utf-8")
    office = subprocess.Popen(
        ["soffice", "--headless", "--norestore", "--nologo", "--nodefault",
         f"-env:UserInstallation={profile_path.as_uri()}", f"--accept=socket,host=127.0.0.1,port={port};urp;"],
        stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    try:
        local = uno.getComponentContext()
        resolver = local.ServiceManager.createInstanceWithContext("com.sun.star.bridge.UnoUrlResolver", local)
        for _ in range(300):  # at most about a minute for the office to start
            try:
                context = resolver.resolve(f"uno:socket,host=127.0.0.1,port={port};urp;StarOffice.ComponentContext")
                break
            except Exception:  # noqa: BLE001 - NoConnectException until the office listens
                time.sleep(0.2)
        else:
            print("LibreOffice did not start", file=sys.stderr)
            return 2
        desktop = context.ServiceManager.createInstanceWithContext("com.sun.star.frame.Desktop", context)
        sheet = desktop.loadComponentFromURL(document_path.as_uri(), "_blank", 0,
                                             (_property("Hidden", True), _property("UpdateDocMode", FULL_UPDATE)))
        frame = sheet.getCurrentController().getFrame()
        dispatcher = context.ServiceManager.createInstanceWithContext("com.sun.star.frame.DispatchHelper", context)
        # What the "allow updating links" answer does when a person opens the file.
        dispatcher.executeDispatch(frame, ".uno:UpdateTableLinks", "", 0, ())
        sheet.calculateAll()
        sheet.storeToURL(pathlib.Path(output).resolve().as_uri(),
                         (_property("FilterName", "Text - txt - csv (StarCalc)"),
                          _property("FilterOptions", CSV_OPTIONS)))
        sheet.close(True)
        try:
            desktop.terminate()
        except Exception:  # noqa: BLE001 - the bridge closes as the office quits
            pass
    finally:
        try:
            office.wait(timeout=30)
        except subprocess.TimeoutExpired:
            office.kill()
            office.wait(timeout=30)
    return 0


if __name__ == "__main__":
    sys.exit(main(*sys.argv[1:5]))
