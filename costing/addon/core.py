"""The add-on's logic, plain Python with no UNO: find the costing package, check and store the
location the user gives for it, decide what to run, turn problems into dialog rows, choose where
the costed workbook goes.

The extension ships this file as ``pythonpath/costing_addon_core.py`` beside its UNO glue
(``glue.py``, shipped as ``route_costing.py``), so it imports nothing but the standard library
at load time: the costing package is imported only after `locate` has put it on ``sys.path``.

Each command returns an `Outcome`, which the glue shows as one dialog: a title, a message and
the problem rows (``Sheet!Cell  message  (fix)``), each row knowing the sheet and cell to
select. Every failure becomes an Outcome with a plain message, never a traceback.
"""

from __future__ import annotations

import contextlib
import io
import os
import re
import sys
import textwrap
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field

ENV_VAR = "COSTING_PYTHONPATH"
# the dependencies named in pyproject.toml, by import name: a missing one is named in the message
DEPENDENCIES = ("openpyxl", "xlsxwriter", "networkx", "pandas", "numpy", "scipy", "defusedxml",
                "matplotlib")

OK, PROBLEMS, ERROR, SETUP = "ok", "problems", "error", "setup"


@dataclass(frozen=True)
class Row:
    """One line of the problems dialog and the cell it points at (sheet/cell empty: none)."""

    text: str
    severity: str
    sheet: str = ""
    cell: str = ""


@dataclass
class Outcome:
    """What a command ends with: shown as one dialog.

    kind: ``ok`` (done; rows are warnings and notes), ``problems`` (errors in the workbook;
    nothing written), ``error`` (the run failed: message says why and what to do), ``setup``
    (the costing package cannot be found or imported).
    """

    kind: str
    title: str
    message: str
    rows: list[Row] = field(default_factory=list)
    output: str | None = None  # the costed workbook written, if any

    def as_dict(self) -> dict:
        return {"kind": self.kind, "title": self.title, "message": self.message, "output": self.output,
                "rows": [{"text": r.text, "severity": r.severity, "sheet": r.sheet, "cell": r.cell}
                         for r in self.rows]}


# ------------------------------------------------------------------ finding the costing package

def search_dirs(setting: str, env: Mapping[str, str]) -> list[str]:
    """Folders to put in front of ``sys.path``: the extension setting, then $COSTING_PYTHONPATH
    (each a list separated by os.pathsep); blanks and duplicates dropped, order kept."""
    dirs: list[str] = []
    for value in (setting or "", env.get(ENV_VAR, "")):
        for d in value.split(os.pathsep):
            d = os.path.expanduser(d.strip())
            if d and d not in dirs:
                dirs.append(d)
    return dirs


def setup_help(python: str, version: str) -> str:
    """What to do when the costing package cannot be imported (the two Debian commands)."""
    return (f"LibreOffice runs its macros with the Python at {python} (version {version}). Either "
            "install costing into that Python:\n"
            "    sudo apt-get install -y python3-uno python3-pip\n"
            f"    sudo {python} -m pip install --break-system-packages /path/to/costing\n"
            "or rebuild the add-on from the Python where costing is installed (it records where "
            "that is):\n"
            "    costing addon build -o costing.oxt --overwrite && unopkg add --force costing.oxt\n"
            "or give the folder costing is installed in (a virtual environment such as ~/.costing, or "
            "its site-packages folder) with Route costing > Set the costing location…, "
            f"or set {ENV_VAR} to the folders holding costing and its dependencies before starting "
            "LibreOffice, then restart LibreOffice.")


def locate(setting: str = "", env: Mapping[str, str] | None = None,
           path: list[str] | None = None) -> Outcome | None:
    """Make ``import costing.pipeline`` work: put the configured folders in front of `path`
    (``sys.path``) and try it. Returns None when it works, else a ``setup`` Outcome saying
    what is missing and what to do."""
    env = os.environ if env is None else env
    path = sys.path if path is None else path
    dirs = search_dirs(setting, env)
    for d in reversed(dirs):
        if d not in path:
            path.insert(0, d)
    missing_dirs = [d for d in dirs if not os.path.isdir(d)]
    try:
        import costing.cli  # noqa: F401
        import costing.pipeline  # noqa: F401
    except ImportError as e:
        name = getattr(e, "name", None) or ""
        where = ("the folders " + os.pathsep.join(dirs)) if dirs else \
            f"LibreOffice's Python (no extension setting, no {ENV_VAR})"
        if name == "costing" or name.startswith("costing."):
            found = f"The costing package was not found in {where}."
        elif name.split(".")[0] in DEPENDENCIES:
            found = (f"The costing package was found, but its dependency {name.split('.')[0]} is not "
                     f"installed for LibreOffice's Python (searched {where}).")
        else:
            found = f"The costing package could not be imported from {where}: {e}."
        if missing_dirs:
            found += " These folders do not exist: " + ", ".join(missing_dirs) + "."
        return Outcome(SETUP, "Route costing: the costing package is not available",
                       found + "\n\n" + setup_help(sys.executable or "python3", sys.version.split()[0]))
    except Exception as e:  # e.g. a compiled dependency built for another Python version
        return Outcome(SETUP, "Route costing: the costing package is not available",
                       f"The costing package was found but failed to load in LibreOffice's Python: "
                       f"{type(e).__name__}: {e}. Its compiled dependencies (numpy, pandas, scipy) must "
                       f"be built for the same Python version.\n\n"
                       + setup_help(sys.executable or "python3", sys.version.split()[0]))
    return None


# ------------------------------------------------------------------ setting the location

def resolve_location(text: str, version: tuple[int, int] | None = None,
                     isdir: Callable[[str], bool] = os.path.isdir,
                     isfile: Callable[[str], bool] = os.path.isfile
                     ) -> tuple[list[str], list[str], list[str]]:
    """Turn what the user typed as the costing location into the folders to store.

    `text` holds one or more folders separated by os.pathsep (``~`` expanded). A virtual
    environment's root (it has ``pyvenv.cfg``) becomes its ``lib/pythonX.Y/site-packages`` for
    `version` (LibreOffice's Python; default: this one); the ``costing`` package folder itself
    becomes the folder above it. Returns (folders, notes on what was changed, problems).
    """
    major, minor = version or sys.version_info[:2]
    dirs: list[str] = []
    notes: list[str] = []
    problems: list[str] = []
    for d in search_dirs(text, {}):
        d = os.path.normpath(os.path.abspath(d))
        if not isdir(d):
            problems.append(f"{d} does not exist or is not a folder.")
            continue
        if isfile(os.path.join(d, "pyvenv.cfg")):
            site = os.path.join(d, "lib", f"python{major}.{minor}", "site-packages")
            if not isdir(site):
                problems.append(f"{d} is a virtual environment without {site}: it was not made with a "
                                f"Python {major}.{minor}, the version LibreOffice runs. Make it with "
                                f"/usr/bin/python3 -m venv.")
                continue
            notes.append(f"{d} is a virtual environment: using its {site}.")
            d = site
        elif os.path.basename(d) == "costing" and isfile(os.path.join(d, "__init__.py")):
            notes.append(f"{d} is the costing package itself: using the folder above it.")
            d = os.path.dirname(d)
        if d not in dirs:
            dirs.append(d)
    return dirs, notes, problems


def set_location(text: str, loaded_from: str | None = None, version: tuple[int, int] | None = None,
                 isdir: Callable[[str], bool] = os.path.isdir,
                 isfile: Callable[[str], bool] = os.path.isfile) -> tuple[Outcome, str | None]:
    """What to store as the PythonPath setting for the location the user typed, and the dialog
    saying so. Returns (Outcome, value to store); the value is None when nothing may be stored
    (a folder is missing, or none holds the costing package). Blank `text` clears the setting.

    `loaded_from` is the folder costing was already imported from in this LibreOffice session,
    if any: Python keeps a module once imported, so another location needs a restart.
    """
    title = "Route costing: costing location"
    if not text.strip():
        return Outcome(OK, title, "The costing location is cleared. Check and Cost now look for costing "
                       f"in the folders of {ENV_VAR}, if set, then in LibreOffice's own Python."), ""
    dirs, notes, problems = resolve_location(text, version, isdir, isfile)
    if problems:
        return Outcome(ERROR, title, "Nothing was changed. " + " ".join(problems)), None
    if not any(isfile(os.path.join(d, "costing", "__init__.py")) for d in dirs):
        return Outcome(ERROR, title, "Nothing was changed: the costing package (a folder costing with "
                       "__init__.py) is in none of " + ", ".join(dirs) + ". Give the virtual environment "
                       "costing is installed in (such as ~/.costing) or its site-packages folder."), None
    value = os.pathsep.join(dirs)
    message = " ".join(notes + [f"Check and Cost will import costing from {value}."])
    if loaded_from and os.path.normpath(loaded_from) not in dirs:
        message += (f" This LibreOffice has already loaded costing from {loaded_from}: restart "
                    "LibreOffice for the new location to take effect.")
    return Outcome(OK, title, message), value


# ------------------------------------------------------------------ paths

_UNSAFE = re.compile(r'[\\/:*?"<>|\x00-\x1f]')


def base_name(doc_path: str | None, title: str | None) -> str:
    """The document's name without extension: from its file, else its window title
    (``Untitled 1``), else ``workbook``; made safe as a file name."""
    if doc_path:
        name = os.path.splitext(os.path.basename(doc_path))[0]
    else:
        name = os.path.splitext(title or "")[0]
    name = _UNSAFE.sub("_", name).strip(" .")
    return name or "workbook"


def output_path(doc_path: str | None, title: str | None, temp_dir: str,
                exists: Callable[[str], bool] = os.path.exists,
                writable: Callable[[str], bool] = lambda d: os.access(d, os.W_OK)) -> str:
    """Where the costed workbook goes: ``NAME-costed.xlsx`` next to the document, or in
    `temp_dir` when the document is unsaved or its folder is not writable; ``NAME-costed-2.xlsx``,
    ... when the name is taken, so earlier output (perhaps open in another window) is kept."""
    name = base_name(doc_path, title)
    folder = os.path.dirname(os.path.abspath(doc_path)) if doc_path else ""
    if not folder or not writable(folder):
        folder = temp_dir
    candidate = os.path.join(folder, f"{name}-costed.xlsx")
    k = 2
    while exists(candidate) or (doc_path and os.path.abspath(candidate) == os.path.abspath(doc_path)):
        candidate = os.path.join(folder, f"{name}-costed-{k}.xlsx")
        k += 1
    return candidate


def copy_path(doc_path: str | None, title: str | None, work_dir: str) -> str:
    """The temporary .xlsx copy of the document to run on, named like the document so the
    costed workbook's Run sheet shows the document's name."""
    return os.path.join(work_dir, base_name(doc_path, title) + ".xlsx")


# ------------------------------------------------------------------ rows

def problem_rows(problems: Sequence) -> list[Row]:
    """Problems (records with severity, sheet, cell, message, fix) as dialog rows, errors
    first, then warnings, then notes, each group in the order found."""
    order = {"error": 0, "warning": 1, "info": 2}
    rows = []
    for p in sorted(problems, key=lambda p: order.get(p.severity, 3)):
        sheet = p.sheet or ""
        where = (f"'{sheet}'" if (" " in sheet or "-" in sheet) else sheet) if sheet else "workbook"
        if sheet and p.cell:
            where += f"!{p.cell}"
        text = f"{p.severity.upper()}  {where}:  {p.message}"
        if p.fix:
            text += f"  (fix: {p.fix})"
        # only a plain A1 cell or range is selectable
        cell = p.cell if p.cell and re.fullmatch(r"\$?[A-Za-z]{1,3}\$?\d+(:\$?[A-Za-z]{1,3}\$?\d+)?",
                                                 p.cell) else ""
        rows.append(Row(text, p.severity, sheet, cell))
    return rows


def text_lines(text: str, width_chars: int) -> int:
    """How many lines `text` takes in a dialog, wrapped at word boundaries to `width_chars`
    characters a line (its own line breaks kept); at least 1."""
    return max(1, sum(len(textwrap.wrap(line, width_chars)) or 1 for line in text.split("\n")))


def _counts(rows: Sequence[Row]) -> str:
    parts = []
    for sev, word in (("error", "error"), ("warning", "warning"), ("info", "note")):
        n = sum(r.severity == sev for r in rows)
        if n:
            parts.append(f"{n} {word}{'s' if n != 1 else ''}")
    return ", ".join(parts) or "no problems"


# ------------------------------------------------------------------ the commands

def check(xlsx: str, doc_name: str) -> Outcome:
    """`costing check` on the copy `xlsx` of the document `doc_name`."""
    from costing import pipeline

    try:
        model, problems, _ = pipeline.load(xlsx)
    except Exception as e:  # a bug or an unexpected file: say so plainly
        return Outcome(ERROR, "Route costing: check failed",
                       f"Checking {doc_name} failed: {type(e).__name__}: {e}. Run `costing check` on a "
                       "saved copy to see more, and report it with the workbook.")
    rows = problem_rows(problems)
    errors = sum(r.severity == "error" for r in rows)
    if model is None or errors:
        return Outcome(PROBLEMS, "Route costing: the workbook has errors",
                       f"{doc_name}: {_counts(rows)}. Fix the errors (pick one to go to its cell), "
                       "then check again.", rows)
    return Outcome(OK, "Route costing: check passed",
                   f"{doc_name}: no errors ({len(model.depots)} depots, {len(model.lanes)} lanes, "
                   f"{len(model.rates)} rate cards, {len(model.shipments)} shipments); {_counts(rows)}.",
                   rows)


def cost(xlsx: str, doc_name: str, output: str, objective: str | None = None) -> Outcome:
    """`costing run XLSX -o OUTPUT` on the copy `xlsx` of the document `doc_name`: the
    command line's own code path, so the costed workbook is the one the command line writes."""
    first = check(xlsx, doc_name)
    if first.kind != OK:
        if first.kind == PROBLEMS:
            first.message = f"{doc_name}: {_counts(first.rows)}; nothing was costed or written. " \
                "Fix the errors (pick one to go to its cell), then cost again."
        return first
    from costing import cli

    # one process: the add-on runs inside Calc's, whose own threads rule out forking it
    argv = ["run", xlsx, "-o", output, "--single-process"] + (["--objective", objective] if objective else [])
    out, err = io.StringIO(), io.StringIO()
    try:
        with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
            code = cli.main(argv)
    except SystemExit as e:  # argparse usage errors
        code = e.code if isinstance(e.code, int) else 2
    except Exception as e:
        return Outcome(ERROR, "Route costing: costing failed",
                       f"Costing {doc_name} failed: {type(e).__name__}: {e}. Nothing was written. Run "
                       "`costing run` on a saved copy to see more, and report it with the workbook.",
                       first.rows)
    said = [line.strip() for line in err.getvalue().splitlines()
            if line.startswith("costing:")]
    if code != 0 or not os.path.exists(output):
        return Outcome(ERROR, "Route costing: costing failed",
                       "\n".join(said) or f"costing stopped with exit code {code}; nothing was written.",
                       first.rows)
    summary = (out.getvalue().strip().splitlines() or [""])[-1]
    return Outcome(OK, "Route costing: costed", f"{doc_name}: {summary}. The costed workbook opens in a "
                   f"new window; {_counts(first.rows)} (also on its Problems sheet).", first.rows, output)
