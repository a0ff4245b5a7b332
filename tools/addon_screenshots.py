"""Regenerate the README's pictures of the Route costing add-on from a headless run:
docs/addon-menu.png (the menu and toolbar), docs/addon-problems.png (Check's dialog on the
example workbook) and docs/addon-location.png (the Set the costing location… dialog).

    python tools/addon_screenshots.py [--out docs] [--keep] [--workbook PATH]

Run it with the Python costing is installed in (it builds the extension). It needs LibreOffice
Calc with python3-uno, Xvfb and ImageMagick's ``import``; openbox, if installed, gives the dialog
its title bar (``apt-get install -y libreoffice-calc python3-uno xvfb imagemagick openbox``).

What it does: builds the .oxt (``costing addon build``) and adds it with ``unopkg add`` to a
throwaway user profile (as nobody when run as root, since unopkg refuses a user profile as root),
starts Xvfb on a free display and LibreOffice on it listening on 127.0.0.1, then runs this file
again with LibreOffice's Python (``--uno``), which opens examples/hollowmere-week.xlsx, docks the
Route costing toolbar, opens the Route costing menu through LibreOffice's accessibility API and
captures the screen, closes the menu, dispatches ``org.costing.addon:check`` (its dialog is modal,
so from a second thread), captures the dialog, picks its second problem (which must select that
cell in the workbook) and closes it with its Close button, then the same for
``org.costing.addon:setpath`` and its Cancel button. The
pictures are cropped with Pillow and saved as PNG with a reduced palette, to stay small.
"""

from __future__ import annotations

import argparse
import json
import os
import shutil
import signal
import socket
import subprocess
import sys
import tempfile
import threading
import time

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
EXAMPLE = os.path.join(ROOT, "examples", "hollowmere-week.xlsx")
UNO_PYTHON = "/usr/bin/python3"
SCREEN = (1280, 800)
TOOLBAR = "private:resource/toolbar/addon_org.costing.addon.toolbar"


# ------------------------------------------------------------------ run with costing's Python

def _need() -> list[str]:
    missing = [tool for tool in ("soffice", "unopkg", "Xvfb", "import") if not shutil.which(tool)]
    if subprocess.run([UNO_PYTHON, "-c", "import uno"], capture_output=True).returncode != 0:
        missing.append("python3-uno")
    if os.geteuid() == 0 and not shutil.which("setpriv"):
        missing.append("setpriv")
    return missing


def _stop(proc: subprocess.Popen | None) -> None:
    if proc is None or proc.poll() is not None:
        return
    try:
        os.killpg(proc.pid, signal.SIGTERM)
        proc.wait(timeout=20)
    except (ProcessLookupError, subprocess.TimeoutExpired):
        try:
            os.killpg(proc.pid, signal.SIGKILL)
        except ProcessLookupError:
            pass


def _crop(src: str, box: list[int] | None, dest: str) -> int:
    """Crop `src` to `box` (left, top, right, bottom in px; None: all of it) into `dest` as a
    small PNG; returns its size in bytes."""
    from PIL import Image

    with Image.open(src) as im:
        left, top, right, bottom = box or (0, 0, im.width, im.height)
        part = im.convert("RGB").crop((max(0, left), max(0, top), min(im.width, right),
                                       min(im.height, bottom)))
    # 64 colours: the window's greys, the icons and the text's anti-aliasing stay legible
    part.quantize(colors=64, method=Image.Quantize.MEDIANCUT, dither=Image.Dither.NONE).save(
        dest, optimize=True)
    return os.path.getsize(dest)


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--out", default=os.path.join(ROOT, "docs"), help="folder for the PNGs (docs)")
    parser.add_argument("--keep", action="store_true", help="keep the temporary folder (profile, logs)")
    parser.add_argument("--workbook", default=EXAMPLE, help="the workbook to open (the example)")
    args = parser.parse_args(argv)
    missing = _need()
    if missing:
        print("addon_screenshots: missing " + ", ".join(missing) + "; on Debian: apt-get install -y "
              "libreoffice-calc python3-uno xvfb imagemagick", file=sys.stderr)
        return 2
    from costing.addon.build import build, package_dirs

    base = tempfile.mkdtemp(prefix="costing-shots-")
    os.chmod(base, 0o755)
    xvfb = wm = office = None
    try:
        oxt = os.path.join(base, "costing.oxt")
        # the extension with no location of its own, so the location dialog's field starts empty;
        # LibreOffice finds costing through COSTING_PYTHONPATH instead
        build(oxt, python_path="")
        workbook = os.path.join(base, os.path.basename(args.workbook))
        shutil.copy(args.workbook, workbook)
        profile = os.path.join(base, "profile")
        env = {k: v for k, v in os.environ.items()
               if k not in ("PYTHONPATH", "PYTHONHOME", "COSTING_PYTHONPATH")}
        # LibreOffice's Python takes its home from the first python3 on PATH: not a venv's
        env.update(HOME=base, LANG="C.UTF-8", PATH=os.pathsep.join(["/usr/bin", "/bin", env.get("PATH", "")]),
                   COSTING_PYTHONPATH=os.pathsep.join(package_dirs()))
        cmd = ["unopkg", "add", f"-env:UserInstallation=file://{profile}", oxt]
        if os.geteuid() == 0:
            for d, _, files in os.walk(base):
                os.chown(d, 65534, 65534)
                for f in files:
                    os.chown(os.path.join(d, f), 65534, 65534)
            cmd = ["setpriv", "--reuid=65534", "--regid=65534", "--clear-groups"] + cmd
        subprocess.run(cmd, check=True, env=env, capture_output=True, timeout=300)
        # a free display: Xvfb writes the number it took to the pipe
        read, write = os.pipe()
        xvfb = subprocess.Popen(["Xvfb", "-displayfd", str(write), "-screen", "0", "{}x{}x24".format(*SCREEN),
                                 "-nolisten", "tcp"], pass_fds=(write,), start_new_session=True,
                                stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        os.close(write)
        with os.fdopen(read) as f:
            display = ":" + f.readline().strip()
        env["DISPLAY"] = display
        if shutil.which("openbox"):
            wm = subprocess.Popen(["openbox"], env=env, start_new_session=True,
                                  stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        with socket.socket() as s:
            s.bind(("127.0.0.1", 0))
            port = s.getsockname()[1]
        log = open(os.path.join(base, "soffice.log"), "w")
        office = subprocess.Popen(["soffice", f"-env:UserInstallation=file://{profile}", "--norestore",
                                   "--nologo", "--nodefault",
                                   f"--accept=socket,host=127.0.0.1,port={port};urp;StarOffice.ComponentContext"],
                                  env=env, stdout=log, stderr=log, start_new_session=True)
        done = subprocess.run([UNO_PYTHON, os.path.abspath(__file__), "--uno", str(port), workbook, base],
                              env=env, capture_output=True, text=True, timeout=600)
        if done.returncode != 0:
            print(done.stdout + done.stderr, file=sys.stderr)
            return 1
        boxes = json.loads(done.stdout)
        # what LibreOffice shows, as its accessibility API names it
        print("menu: " + " | ".join(boxes["found"]["menu"]))
        print("toolbar: " + " | ".join(boxes["found"]["toolbar"]))
        picked = boxes["found"]["picked"]
        print(f"picked: {picked['row'].split(':')[0]} -> {picked['selection']}; "
              f"shown in full: {picked['detail']}")
        os.makedirs(args.out, exist_ok=True)
        for name in ("menu", "problems", "location"):
            dest = os.path.join(args.out, f"addon-{name}.png")
            size = _crop(os.path.join(base, f"{name}-screen.png"), boxes[name], dest)
            print(f"{dest}: {size / 1024:.0f} KB")
        return 0
    finally:
        for proc in (office, wm, xvfb):
            _stop(proc)
        if args.keep:
            print(f"kept {base}")
        else:
            shutil.rmtree(base, ignore_errors=True)


# ------------------------------------------------------------------ run with LibreOffice's Python

def uno_part(port: int, workbook: str, folder: str) -> dict:
    """Drive the office on `port`: capture the menu and the Check dialog into `folder`; returns
    the crop boxes (left, top, right, bottom in screen px) of each picture."""
    import uno
    from com.sun.star.awt import Point

    local = uno.getComponentContext()
    resolver = local.ServiceManager.createInstanceWithContext("com.sun.star.bridge.UnoUrlResolver", local)
    deadline = time.monotonic() + 90
    while True:
        try:
            ctx = resolver.resolve(f"uno:socket,host=127.0.0.1,port={port};urp;StarOffice.ComponentContext")
            break
        except Exception:
            if time.monotonic() > deadline:
                raise
            time.sleep(0.5)
    smgr = ctx.ServiceManager

    def prop(name, value):
        p = uno.createUnoStruct("com.sun.star.beans.PropertyValue")
        p.Name, p.Value = name, value
        return p

    # no tip-of-the-day dialog over the pictures
    provider = smgr.createInstanceWithContext("com.sun.star.configuration.ConfigurationProvider", ctx)
    misc = provider.createInstanceWithArguments("com.sun.star.configuration.ConfigurationUpdateAccess",
                                                (prop("nodepath", "/org.openoffice.Office.Common/Misc"),))
    misc.setPropertyValue("ShowTipOfTheDay", False)
    misc.commitChanges()

    desktop = smgr.createInstanceWithContext("com.sun.star.frame.Desktop", ctx)
    doc = None
    while doc is None:
        doc = desktop.loadComponentFromURL(uno.systemPathToFileUrl(workbook), "_blank", 0, ())
        time.sleep(0.5)
    frame = doc.getCurrentController().getFrame()
    window = frame.getContainerWindow()
    window.setPosSize(0, 0, 1000, 620, 15)
    # the Lanes sheet, where the example's first warning is
    if doc.getSheets().hasByName("Lanes"):
        doc.getCurrentController().setActiveSheet(doc.getSheets().getByName("Lanes"))
    layout = frame.LayoutManager
    # docked in a row of its own, under the standard toolbar
    layout.dockWindow(TOOLBAR, uno.Enum("com.sun.star.ui.DockingArea", "DOCKINGAREA_TOP"), Point(0, 1))
    layout.doLayout()
    time.sleep(2)

    def capture(name, window="root"):
        time.sleep(1.5)  # let the screen settle
        # -frame: with the window manager's frame (title bar), when a window is named
        subprocess.run(["import", "-window", window] + (["-frame"] if window != "root" else []) +
                       [os.path.join(folder, f"{name}-screen.png")], check=True)

    def screen_box(ctx_):
        loc, size = ctx_.getLocationOnScreen(), ctx_.getSize()
        return loc.X, loc.Y, loc.X + size.Width, loc.Y + size.Height

    # the menu: found by its title in the menu bar, opened by its accessible action
    bar = window.getAccessibleContext().getAccessibleChild(0).getAccessibleContext()
    menus = [bar.getAccessibleChild(i).getAccessibleContext() for i in range(bar.getAccessibleChildCount())]
    menu = next(m for m in menus if m.getAccessibleName() == "Route costing")
    menu.doAccessibleAction(0)
    time.sleep(1)
    entries = [menu.getAccessibleChild(i).getAccessibleContext()
               for i in range(menu.getAccessibleChildCount())]
    items = [screen_box(e) for e in entries]
    found = {"menu": [e.getAccessibleName() for e in entries if e.getAccessibleName()]}
    toolbar = layout.getElement(TOOLBAR).getRealInterface().getAccessibleContext()
    found["toolbar"] = [toolbar.getAccessibleChild(i).getAccessibleContext().getAccessibleName()
                        for i in range(toolbar.getAccessibleChildCount())]
    # the toolbars' docking area: the panel just under the menu bar
    parts = [screen_box(window.getAccessibleContext().getAccessibleChild(i).getAccessibleContext())
             for i in range(window.getAccessibleContext().getAccessibleChildCount())]
    menubar = screen_box(bar)
    toolbars = max((p for p in parts if p[1] == menubar[3] and p[2] > p[0]), key=lambda p: p[3])
    capture("menu")
    # from the menu bar (not the window's title bar) down to the menu's or the toolbars' bottom
    boxes = {"found": found, "menu": [0, menubar[1], max(b[2] for b in items) + 16,
                      max(max(b[3] for b in items) + 6, toolbars[3] + 1)]}
    menu.doAccessibleAction(0)  # closes it again
    time.sleep(1)

    transformer = smgr.createInstanceWithContext("com.sun.star.util.URLTransformer", ctx)
    toolkit = smgr.createInstanceWithContext("com.sun.star.awt.Toolkit", ctx)

    def dialog_of(command, name, button, typed=None):
        """Dispatch `command`, capture the dialog it opens as `name` (with `typed` in its text
        field), close it with `button`.
        The dialog is modal, so the dispatch returns when it closes: dispatch from a thread."""
        url = uno.createUnoStruct("com.sun.star.util.URL")
        url.Complete = command
        _, url = transformer.parseStrict(url)
        dispatcher = frame.queryDispatch(url, "_self", 0)
        worker = threading.Thread(target=dispatcher.dispatch, args=(url, ()), daemon=True)
        worker.start()
        dialog, deadline = None, time.monotonic() + 120
        while dialog is None:
            if time.monotonic() > deadline:
                raise RuntimeError(f"no dialog after {command}")
            time.sleep(0.5)
            for i in range(toolkit.getTopWindowCount()):
                top = toolkit.getTopWindow(i)
                acc = top.getAccessibleContext() if hasattr(top, "getAccessibleContext") else None
                if acc is not None and acc.getAccessibleName().startswith("Route costing:"):
                    dialog = acc
        if typed is not None:
            _find(dialog, role="TEXT").getAccessibleContext().setText(typed)
        try:  # the dialog's own window, with its title bar when a window manager draws one
            capture(name, dialog.getAccessibleName())
            boxes[name] = None
        except subprocess.CalledProcessError:
            capture(name)
            boxes[name] = list(screen_box(dialog))
        if name == "problems":  # after the picture: pick the second problem, as a user would
            found["picked"] = _pick(dialog, 1, doc)
        _find(dialog, button).getAccessibleContext().doAccessibleAction(0)
        worker.join(timeout=30)

    dialog_of("org.costing.addon:check", "problems", "Close")
    dialog_of("org.costing.addon:setpath", "location", "Cancel", typed="~/.costing")
    doc.close(True)
    return boxes


def _pick(dialog, index, doc):
    """Select row `index` of the dialog's problem list through the accessibility API (the list's
    XAccessibleSelection, which fires the add-on's item listener as a click does); returns the row,
    the document's selection afterwards and whether the dialog shows the row in full elsewhere."""
    import uno

    listbox = _find(dialog, role="LIST").getAccessibleContext()
    row = listbox.getAccessibleChild(index).getAccessibleContext().getAccessibleName()
    listbox.selectAccessibleChild(index)
    time.sleep(1)
    item = uno.getConstantByName("com.sun.star.accessibility.AccessibleRole.LIST_ITEM")

    def names(acc, depth=0):
        for i in range(acc.getAccessibleChildCount()):
            c = acc.getAccessibleChild(i).getAccessibleContext()
            if c.getAccessibleRole() != item:
                yield c.getAccessibleName()
            if depth < 6:
                yield from names(c, depth + 1)

    selection = doc.getCurrentController().getSelection()
    return {"row": row, "selection": getattr(selection, "AbsoluteName", None),
            "detail": row in names(dialog)}


def _find(acc, name=None, role=None, depth=0):
    """The first accessible descendant of `acc` (a context) with that name, or that role (an
    AccessibleRole constant's name)."""
    import uno

    wanted = uno.getConstantByName(f"com.sun.star.accessibility.AccessibleRole.{role}") if role else None
    for i in range(acc.getAccessibleChildCount()):
        child = acc.getAccessibleChild(i)
        c = child.getAccessibleContext()
        if (name is not None and c.getAccessibleName() == name) or \
                (wanted is not None and c.getAccessibleRole() == wanted):
            return child
        if depth < 6:
            found = _find(c, name, role, depth + 1)
            if found is not None:
                return found
    return None


if __name__ == "__main__":
    if len(sys.argv) > 1 and sys.argv[1] == "--uno":
        print(json.dumps(uno_part(int(sys.argv[2]), sys.argv[3], sys.argv[4])))
    else:
        sys.exit(main())
