"""Build the Route costing extension (.oxt): ``costing addon build [-o PATH]``.

The .oxt is a zip of the files in ``oxt/`` (the toolbar icons in ``oxt/icons/`` as they are), the
UNO glue (``glue.py`` as ``route_costing.py``) and the plain logic (``core.py`` as
``pythonpath/costing_addon_core.py``, a folder LibreOffice puts on the component's ``sys.path``).
The extension setting PythonPath defaults to the folders this Python imports costing and its
dependencies from, so an extension built where costing is installed finds it, provided
LibreOffice's Python has the same version (see the README).
"""

from __future__ import annotations

import importlib
import os
import sys
import zipfile
from xml.sax.saxutils import escape

from costing import __version__

HERE = os.path.dirname(os.path.abspath(__file__))
OXT = os.path.join(HERE, "oxt")
FILES = ("META-INF/manifest.xml", "description.xml", "description-en.txt", "Addons.xcu",
         "ProtocolHandler.xcu", "Settings.xcs", "Settings.xcu")


def package_dirs() -> list[str]:
    """The folders this Python imports costing and its dependencies from, in that order."""
    from costing.addon.core import DEPENDENCIES

    dirs: list[str] = []
    for name in ("costing",) + DEPENDENCIES:
        try:
            module = importlib.import_module(name)
        except ImportError:
            continue
        folder = os.path.dirname(os.path.dirname(os.path.abspath(module.__file__)))
        if folder not in dirs:
            dirs.append(folder)
    return dirs


def icon_names() -> list[str]:
    """The toolbar icons shipped, as paths inside the extension (``icons/NAME-SIZE.png``)."""
    folder = os.path.join(OXT, "icons")
    return sorted(f"icons/{f}" for f in os.listdir(folder) if f.endswith(".png"))


def build(output: str, python_path: str | None = None) -> str:
    """Write the extension to `output`; `python_path` is the PythonPath setting to ship
    (None: `package_dirs` of this Python, "": none). Returns the setting shipped."""
    setting = os.pathsep.join(package_dirs()) if python_path is None else python_path
    with zipfile.ZipFile(output, "w", zipfile.ZIP_DEFLATED) as z:
        # the mimetype first and stored, as for other OpenDocument packages
        z.writestr(zipfile.ZipInfo("mimetype"), "application/vnd.openofficeorg.extension")
        for name in FILES:
            with open(os.path.join(OXT, name), encoding="utf-8") as f:
                text = f.read()
            text = text.replace("@VERSION@", __version__).replace("@PYTHONPATH@", escape(setting))
            z.writestr(name, text)
        for name in icon_names():
            z.write(os.path.join(OXT, name), name)
        z.write(os.path.join(HERE, "glue.py"), "route_costing.py")
        z.write(os.path.join(HERE, "core.py"), "pythonpath/costing_addon_core.py")
    return setting


def python_version_note() -> str:
    """This Python's version, for the build message (LibreOffice's must match it)."""
    return f"{sys.version_info.major}.{sys.version_info.minor}"
