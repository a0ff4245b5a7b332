"""Drives a running headless LibreOffice over UNO for tests/test_addon.py. Run with the Python
LibreOffice uses (it needs python3-uno's `uno` module), not the test's own Python:

    python3 tests/addon_driver.py PORT install OXT
    python3 tests/addon_driver.py PORT WORKBOOK COMMAND [COMMAND ...]

``install`` adds the extension OXT to the office's user profile and ends the office.

Opens WORKBOOK, dispatches each COMMAND (an org.costing.addon: URL such as
``org.costing.addon:check``) on the document's frame with dispatchWithNotification, and prints
one JSON object: the result of each command, the selection after each, whether the document
was modified, and the URLs of every open document. Imports nothing of the costing package.
"""

import json
import sys
import time

import uno
import unohelper
from com.sun.star.frame import XDispatchResultListener


class Listener(unohelper.Base, XDispatchResultListener):
    def __init__(self):
        self.result = None

    def dispatchFinished(self, event):
        self.result = event.Result

    def disposing(self, _source):
        pass


def prop(name, value):
    p = uno.createUnoStruct("com.sun.star.beans.PropertyValue")
    p.Name, p.Value = name, value
    return p


def connect(port, seconds=90):
    local = uno.getComponentContext()
    resolver = local.ServiceManager.createInstanceWithContext("com.sun.star.bridge.UnoUrlResolver", local)
    deadline = time.monotonic() + seconds
    while True:
        try:
            return resolver.resolve(f"uno:socket,host=127.0.0.1,port={port};urp;StarOffice.ComponentContext")
        except Exception:
            if time.monotonic() > deadline:
                raise
            time.sleep(0.5)


def install(port, oxt):
    """Add the extension to the running office's user profile (unopkg refuses to as root)."""
    ctx = connect(port)
    manager = ctx.getValueByName("/singletons/com.sun.star.deployment.ExtensionManager")
    try:
        package = manager.addExtension(uno.systemPathToFileUrl(oxt), (), "user", None, None)
    except Exception as e:
        print(json.dumps({"installed": False, "error": str(e), "cause": repr(getattr(e, "Cause", None))}))
        raise
    names = [p.getName() for p in manager.getDeployedExtensions("user", None, None) if p is not None]
    print(json.dumps({"installed": package is not None, "extensions": names}))
    desktop = ctx.ServiceManager.createInstanceWithContext("com.sun.star.frame.Desktop", ctx)
    try:
        desktop.terminate()
    except Exception:  # the bridge closes as the office exits
        pass


def main(port, workbook, commands):
    ctx = connect(port)
    smgr = ctx.ServiceManager
    desktop = smgr.createInstanceWithContext("com.sun.star.frame.Desktop", ctx)
    doc, deadline = None, time.monotonic() + 60
    while doc is None:  # a just-started office may refuse to load for a moment, or raise
        try:
            doc = desktop.loadComponentFromURL(uno.systemPathToFileUrl(workbook), "_blank", 0, ())
        except Exception as e:
            if time.monotonic() > deadline:
                raise RuntimeError(f"LibreOffice did not open {workbook}: {e!r}") from e
            print(f"retrying the load after {e!r}", file=sys.stderr)
        if doc is None:
            if time.monotonic() > deadline:
                raise RuntimeError(f"LibreOffice did not open {workbook}")
            time.sleep(0.5)
    frame = doc.getCurrentController().getFrame()
    transformer = smgr.createInstanceWithContext("com.sun.star.util.URLTransformer", ctx)
    out = {"commands": []}
    for command in commands:
        url = uno.createUnoStruct("com.sun.star.util.URL")
        url.Complete = command
        _, url = transformer.parseStrict(url)
        dispatcher = frame.queryDispatch(url, "_self", 0)
        entry = {"command": command, "handled": dispatcher is not None}
        if dispatcher is not None:
            listener = Listener()
            dispatcher.dispatchWithNotification(url, (), listener)
            entry["result"] = json.loads(listener.result) if listener.result else None
        selection = doc.getCurrentController().getSelection()
        entry["selection"] = getattr(selection, "AbsoluteName", None)
        out["commands"].append(entry)
    out["modified"] = doc.isModified()
    out["document_url"] = doc.getURL()
    components = desktop.getComponents().createEnumeration()
    out["open"] = []
    while components.hasMoreElements():
        component = components.nextElement()
        out["open"].append(component.getURL() if hasattr(component, "getURL") else "")
    print(json.dumps(out))


if __name__ == "__main__":
    if sys.argv[2] == "install":
        install(int(sys.argv[1]), sys.argv[3])
    else:
        main(int(sys.argv[1]), sys.argv[2], sys.argv[3:])
