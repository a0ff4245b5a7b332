"""The LibreOffice Calc extension (issue #15): its plain logic without UNO, the built .oxt, and
the extension installed in a real headless LibreOffice driven over UNO.

Outside references: LibreOffice itself (installs the .oxt, runs its Python, stores the .xlsx
copy, opens the costed workbook, reports the selected cell), openpyxl (reads the costed
workbook by header text and finds the broken cell independently), the zip and XML parsers of
the standard library. The live tests skip with the reason where LibreOffice or python3-uno is
missing, and fail instead under CI=true.
"""

from __future__ import annotations

import hashlib
import json
import os
import shutil
import signal
import socket
import subprocess
import sys
import sysconfig
import tempfile
import time
import zipfile
from xml.etree import ElementTree

import openpyxl
import pytest
from PIL import Image

from costing.addon import build as addon_build
from costing.addon import core
from tests.conftest import base_data

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
EXAMPLE = os.path.join(ROOT, "examples", "hollowmere-week.xlsx")
DRIVER = os.path.join(ROOT, "tests", "addon_driver.py")
CORE = os.path.join(ROOT, "costing", "addon", "core.py")


# ------------------------------------------------------------------ plain logic, no UNO

def test_search_dirs_setting_first_then_env_without_duplicates():
    # common practice, no source: an explicit setting wins over the environment, like PATH lists
    env = {core.ENV_VAR: os.pathsep.join(["/b", "/a", ""])}
    assert core.search_dirs(os.pathsep.join(["/a", " ", "/c"]), env) == ["/a", "/c", "/b"]
    assert core.search_dirs("", {}) == []


def test_output_path_beside_document_then_next_free_name_then_temp(tmp_path):
    # the rule: NAME-costed.xlsx next to the document, temp if unsaved; the next free
    # name (as `costing demo` does) so an earlier output is kept
    doc = tmp_path / "week 12.xlsx"
    doc.write_bytes(b"")
    temp = str(tmp_path / "temp")
    assert core.output_path(str(doc), None, temp) == str(tmp_path / "week 12-costed.xlsx")
    (tmp_path / "week 12-costed.xlsx").write_bytes(b"")
    assert core.output_path(str(doc), None, temp) == str(tmp_path / "week 12-costed-2.xlsx")
    assert core.output_path(None, "Untitled 1", temp) == os.path.join(temp, "Untitled 1-costed.xlsx")
    assert core.output_path(str(doc), None, temp, writable=lambda d: False) == \
        os.path.join(temp, "week 12-costed.xlsx")
    # an odd window title still gives a plain file name in the chosen folder
    assert core.output_path(None, "a/b:c.ods", temp) == os.path.join(temp, "a_b_c-costed.xlsx")
    assert core.copy_path(str(doc), None, temp) == os.path.join(temp, "week 12.xlsx")


def _fake_venv(root, version=(3, 11)):
    """A virtual environment's layout as the standard library names it: pyvenv.cfg at the root
    (PEP 405) and the purelib folder of the posix_prefix scheme (sysconfig), holding costing."""
    (root / "pyvenv.cfg").parent.mkdir(parents=True, exist_ok=True)
    (root / "pyvenv.cfg").write_text("home = /usr/bin\n")
    site = sysconfig.get_path("purelib", "posix_prefix", vars={
        "base": str(root), "platbase": str(root), "py_version_short": "{}.{}".format(*version),
        "implementation_lower": "python", "abiflags": "", "installed_base": str(root)})
    os.makedirs(os.path.join(site, "costing"))
    open(os.path.join(site, "costing", "__init__.py"), "w").close()
    return site


def test_set_location_from_a_venv_root_its_site_packages_or_the_package_folder(tmp_path):
    site = _fake_venv(tmp_path / "venv")
    # a virtual environment's root: its site-packages for LibreOffice's Python version
    outcome, value = core.set_location(str(tmp_path / "venv"), version=(3, 11))
    assert outcome.kind == core.OK and value == site
    assert "virtual environment" in outcome.message and site in outcome.message
    # its site-packages as such, or the costing folder itself (-> the folder above it)
    assert core.set_location(site, version=(3, 11))[1] == site
    outcome, value = core.set_location(os.path.join(site, "costing") + os.pathsep + str(tmp_path),
                                       version=(3, 11))
    assert value == os.pathsep.join([site, str(tmp_path)]) and "package itself" in outcome.message
    # costing already imported from elsewhere in this LibreOffice: a restart is needed
    assert "restart" in core.set_location(site, loaded_from="/elsewhere", version=(3, 11))[0].message
    assert "restart" not in core.set_location(site, loaded_from=site, version=(3, 11))[0].message


def test_set_location_refuses_what_cannot_hold_costing_and_blank_clears(tmp_path):
    _fake_venv(tmp_path / "venv")
    # a venv made with another Python version has no site-packages for LibreOffice's
    outcome, value = core.set_location(str(tmp_path / "venv"), version=(3, 12))
    assert outcome.kind == core.ERROR and value is None and "3.12" in outcome.message
    outcome, value = core.set_location(str(tmp_path / "nowhere"))
    assert outcome.kind == core.ERROR and value is None and "does not exist" in outcome.message
    (tmp_path / "empty").mkdir()
    outcome, value = core.set_location(str(tmp_path / "empty"))
    assert outcome.kind == core.ERROR and value is None and "costing package" in outcome.message
    outcome, value = core.set_location("  ")
    assert outcome.kind == core.OK and value == "" and core.ENV_VAR in outcome.message


def test_text_lines_counts_wrapped_lines():
    # hand-counted: a word longer than the line is cut at the width; explicit breaks kept
    assert core.text_lines("", 10) == 1
    assert core.text_lines("x" * 25, 10) == 3
    assert core.text_lines("one two three four", 10) == 2  # "one two" / "three four"
    assert core.text_lines("one two three four", 9) == 3  # "one two" / "three" / "four"
    assert core.text_lines("one\n\ntwo", 10) == 3


def _broken_input(make_input) -> str:
    data = base_data()
    data["Lanes"][0]["from_depot"] = "NOWHERE"  # no such depot
    return make_input(data, "broken.xlsx")


def _cell_holding(path: str, sheet: str, value: str) -> str:
    # openpyxl, not our reader: where the planted bad value really is
    ws = openpyxl.load_workbook(path)[sheet]
    return next(c.coordinate for row in ws.iter_rows() for c in row if c.value == value)


def test_check_rows_name_sheet_cell_and_fix(make_input):
    path = _broken_input(make_input)
    outcome = core.check(path, "broken.xlsx")
    assert outcome.kind == core.PROBLEMS
    where = _cell_holding(path, "Lanes", "NOWHERE")
    row = next(r for r in outcome.rows if r.sheet == "Lanes" and r.cell == where)
    assert row.severity == "error" and row.text.startswith(f"ERROR  Lanes!{where}:")
    assert "(fix: " in row.text
    assert [r.severity for r in outcome.rows] == sorted((r.severity for r in outcome.rows),
                                                        key=["error", "warning", "info"].index)


def test_cost_writes_nothing_on_errors_and_the_cli_workbook_otherwise(make_input, tmp_path):
    broken = _broken_input(make_input)
    out = str(tmp_path / "broken-costed.xlsx")
    assert core.cost(broken, "broken.xlsx", out).kind == core.PROBLEMS
    assert not os.path.exists(out)
    good = make_input(name="good.xlsx")
    outcome = core.cost(good, "good.xlsx", out)
    assert outcome.kind == core.OK and outcome.output == out and os.path.exists(out)
    assert _ties_out(out)


def _run_core_isolated(tmp_path, code: str) -> dict:
    """Run `code` with core.py in a Python without site-packages (-I -S), so costing is only
    importable through what locate() is given."""
    script = tmp_path / "probe.py"
    script.write_text("import importlib.util, json, sys\n"
                      f"spec = importlib.util.spec_from_file_location('core', {CORE!r})\n"
                      "core = importlib.util.module_from_spec(spec); sys.modules['core'] = core\n"
                      "spec.loader.exec_module(core)\n"
                      + code)
    done = subprocess.run([sys.executable, "-I", "-S", str(script)], capture_output=True, text=True,
                          cwd=tmp_path, timeout=60)
    assert done.returncode == 0, done.stderr
    return json.loads(done.stdout)


def test_locate_says_what_is_missing_and_what_to_do(tmp_path):
    fake = tmp_path / "fake" / "costing"
    fake.mkdir(parents=True)
    (fake / "__init__.py").write_text("")
    (fake / "pipeline.py").write_text("import openpyxl\n")  # a dependency this Python lacks (-S)
    (fake / "cli.py").write_text("")
    code = ("r1 = core.locate('/no/such/dir', {})\n"
            f"r2 = core.locate('', {{'COSTING_PYTHONPATH': {str(tmp_path / 'fake')!r}}})\n"
            "print(json.dumps([r1.as_dict(), r2.as_dict()]))\n")
    none_found, dep_missing = _run_core_isolated(tmp_path, code)
    assert none_found["kind"] == core.SETUP
    assert "was not found" in none_found["message"] and "/no/such/dir" in none_found["message"]
    assert "do not exist" in none_found["message"] and "pip install" in none_found["message"]
    assert dep_missing["kind"] == core.SETUP and "openpyxl" in dep_missing["message"]
    assert core.ENV_VAR in dep_missing["message"]


def test_built_extension_is_a_complete_package(tmp_path):
    out = tmp_path / "costing.oxt"
    setting = addon_build.build(str(out), "/opt/a" + os.pathsep + "/opt/b & c")
    with zipfile.ZipFile(out) as z:
        names = set(z.namelist())
        # the OpenDocument packaging rule LibreOffice extensions follow: mimetype first, stored
        first = z.infolist()[0]
        assert first.filename == "mimetype" and first.compress_type == zipfile.ZIP_STORED
        manifest = ElementTree.fromstring(z.read("META-INF/manifest.xml"))
        ns = "{http://openoffice.org/2001/manifest}"
        listed = {e.get(ns + "full-path") for e in manifest.iter(ns + "file-entry")}
        assert listed <= names and "route_costing.py" in listed
        assert "pythonpath/costing_addon_core.py" in names
        for name in names:
            if name.endswith((".xml", ".xcu", ".xcs")):
                ElementTree.fromstring(z.read(name))  # well-formed XML
        addons = z.read("Addons.xcu").decode()
        assert "Route costing" in addons and "Check this workbook" in addons and \
            "Cost this workbook" in addons
        values = [e.text for e in ElementTree.fromstring(z.read("Settings.xcu")).iter("value")]
        assert values == [setting]  # the &-escaped path reads back exactly
        # every file Addons.xcu names by %origin% (the icons) is in the package, and is a square
        # RGBA PNG of LibreOffice's small (16 px) or large (26 px) toolbar size (read with Pillow)
        referenced = [e.text[len("%origin%/"):] for e in ElementTree.fromstring(z.read("Addons.xcu")).iter(
            "value") if e.text and e.text.startswith("%origin%/")]
        assert len(referenced) == 4 and set(referenced) <= names
        assert set(addon_build.icon_names()) == set(referenced)
        for name in referenced:
            with Image.open(z.open(name)) as im:
                assert im.format == "PNG" and im.mode == "RGBA" and im.size in ((16, 16), (26, 26))
                assert im.getextrema()[3][1] == 255  # something is drawn
        # the images are bound to the commands the menu and toolbar dispatch
        urls = {e.text for e in ElementTree.fromstring(z.read("Addons.xcu")).iter("value")}
        assert {"org.costing.addon:check", "org.costing.addon:cost", "org.costing.addon:setpath"} <= urls


def test_package_data_ships_every_extension_file():
    # what setuptools installs is what pyproject's package-data globs match (fnmatch, as setuptools
    # matches them): every file of oxt/ must be matched, or an installed costing builds a broken .oxt
    import fnmatch

    tomllib = pytest.importorskip("tomllib")  # Python 3.11+
    with open(os.path.join(ROOT, "pyproject.toml"), "rb") as f:
        globs = tomllib.load(f)["tool"]["setuptools"]["package-data"]["costing.addon"]
    folder = os.path.join(ROOT, "costing", "addon")
    files = [os.path.relpath(os.path.join(d, f), folder).replace(os.sep, "/")
             for d, _, fs in os.walk(os.path.join(folder, "oxt")) for f in fs]
    assert any(f.startswith("oxt/icons/") for f in files)
    unmatched = [f for f in files if not any(fnmatch.fnmatch(f, g) for g in globs)]
    assert unmatched == []


def test_cli_addon_build(cli, tmp_path):
    out = tmp_path / "x.oxt"
    code, stdout, _ = cli("addon", "build", "-o", str(out))
    assert code == 0 and out.exists() and "unopkg add" in stdout
    assert cli("addon", "build", "-o", str(out))[0] == 2  # exists: needs --overwrite
    assert cli("addon", "build", "-o", str(tmp_path / "x.zip"))[0] == 2


# ------------------------------------------------------------------ the costed workbook

def _ties_out(path: str) -> bool:
    """Sum of the Summary's total_cost over shipment rows equals its TOTAL row (read by header)."""
    ws = openpyxl.load_workbook(path, data_only=True)["Summary"]
    rows = list(ws.iter_rows(values_only=True))
    header = rows[0]
    first, total = 0, header.index("total_cost")
    shipments = [r for r in rows[1:] if r[first] not in (None, "TOTAL")]
    total_row = next(r for r in rows[1:] if r[first] == "TOTAL")
    summed = sum(r[total] or 0 for r in shipments)
    assert len(shipments) > 0
    return round(summed * 100) == round(total_row[total] * 100)


# ------------------------------------------------------------------ a real LibreOffice

def _uno_python() -> str | None:
    """The Python LibreOffice uses, if python3-uno is installed for it."""
    for exe in (os.environ.get("COSTING_UNO_PYTHON"), "/usr/bin/python3", shutil.which("python3")):
        if exe and os.path.exists(exe) and subprocess.run([exe, "-c", "import uno"],
                                                          capture_output=True).returncode == 0:
            return exe
    return None


def _missing() -> str | None:
    if not shutil.which("soffice"):
        return "LibreOffice is not installed (apt-get install libreoffice-calc)"
    if not shutil.which("unopkg"):
        return "unopkg is not installed (it comes with libreoffice-calc)"
    if _uno_python() is None:
        return "python3-uno is not installed (apt-get install python3-uno)"
    if os.geteuid() == 0 and not shutil.which("setpriv"):
        return "setpriv (util-linux) is needed to run unopkg as root into a throwaway profile"
    return None


@pytest.fixture(scope="module")
def office():
    """A headless LibreOffice with the extension installed in a throwaway profile, listening on
    127.0.0.1 only. Yields run(workbook, *commands) -> the driver's JSON."""
    reason = _missing()
    if reason:
        if os.environ.get("CI") == "true":
            pytest.fail(f"CI=true but the add-on cannot be tested: {reason}")
        pytest.skip(reason)
    base = tempfile.mkdtemp(prefix="costing-addon-")
    os.chmod(base, 0o755)
    oxt = os.path.join(base, "costing.oxt")
    addon_build.build(oxt)  # the default: the folders this Python finds costing in
    profile = os.path.join(base, "profile")
    env = {k: v for k, v in os.environ.items() if k not in ("PYTHONPATH", "PYTHONHOME", core.ENV_VAR)}
    env["HOME"] = base
    # LibreOffice's embedded Python finds its home from the first python3 on PATH: an activated
    # venv or pyenv there makes it load another Python's standard library (and fail to start)
    env["PATH"] = os.pathsep.join([os.path.dirname(_uno_python()), env.get("PATH", "")])
    cmd = ["unopkg", "add", f"-env:UserInstallation=file://{profile}", oxt]
    if os.geteuid() == 0:  # unopkg refuses a user profile as root; run it as nobody
        os.chown(base, 65534, 65534)
        os.chmod(oxt, 0o644)
        cmd = ["setpriv", "--reuid=65534", "--regid=65534", "--clear-groups"] + cmd
    done = subprocess.run(cmd, capture_output=True, text=True, env=env, timeout=300)
    assert done.returncode == 0, done.stdout + done.stderr
    log = open(os.path.join(base, "soffice.log"), "w")
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    proc = subprocess.Popen(["soffice", f"-env:UserInstallation=file://{profile}", "--headless",
                             "--invisible", "--norestore", "--nologo", "--nodefault",
                             f"--accept=socket,host=127.0.0.1,port={port};urp;StarOffice.ComponentContext"],
                            env=env, stdout=log, stderr=log, start_new_session=True)
    python = _uno_python()
    kept: list[str] = []

    def run(workbook: str, *commands: str) -> dict:
        out = subprocess.run([python, DRIVER, str(port), workbook, *commands], capture_output=True,
                             text=True, env=env, timeout=600)
        if out.returncode != 0 and proc.poll() is None:
            # once more: on a busy machine the UNO bridge can drop its first connection while the
            # office is still starting (the driver's own answer is checked either way)
            time.sleep(3)
            out = subprocess.run([python, DRIVER, str(port), workbook, *commands], capture_output=True,
                                 text=True, env=env, timeout=600)
        if out.returncode != 0:
            with open(log.name) as f:
                said = f.read()
            kept.append(base)  # the profile and logs, for a look afterwards
            pytest.fail(f"driver failed: {out.stderr}\nsoffice (exit {proc.poll()}) said: {said}\n"
                        f"profile and logs kept in {base}")
        return json.loads(out.stdout)

    try:
        yield run
    finally:
        try:
            os.killpg(proc.pid, signal.SIGTERM)
            proc.wait(timeout=20)
        except (ProcessLookupError, subprocess.TimeoutExpired):
            try:
                os.killpg(proc.pid, signal.SIGKILL)
            except ProcessLookupError:
                pass
        log.close()
        if not os.environ.get("COSTING_KEEP_OFFICE") and not kept:
            shutil.rmtree(base, ignore_errors=True)


def _digest(path: str) -> str:
    with open(path, "rb") as f:
        return hashlib.sha256(f.read()).hexdigest()


def test_menu_commands_check_and_cost_the_example(office, tmp_path):
    doc = tmp_path / "hollowmere-week.xlsx"
    shutil.copy(EXAMPLE, doc)
    before = _digest(str(doc))
    started = time.monotonic()
    got = office(str(doc), "org.costing.addon:check", "org.costing.addon:goto?Lanes!E13",
                 "org.costing.addon:cost")
    check, goto, cost = got["commands"]
    assert all(c["handled"] for c in got["commands"]), "the protocol handler is not registered"
    # check: the example's planted warning, at the cell the README names, and the four shipments
    # split over several vehicles (the same findings `costing check` prints)
    assert check["result"]["kind"] == core.OK, check["result"]["message"]
    assert [(r["sheet"], r["cell"]) for r in check["result"]["rows"]] == [
        ("Lanes", "E13"), ("Shipments", "D6"), ("Shipments", "D7"), ("Shipments", "D45"),
        ("Shipments", "D48")]
    assert check["result"]["dialog_rows"] == [r["text"] for r in check["result"]["rows"]]
    # picking a problem selects its cell: LibreOffice reports the selection
    assert goto["result"]["selected"] is True and goto["selection"] == "$Lanes.$E$13"
    # cost: NAME-costed.xlsx beside the document, opened in LibreOffice, tying out
    out = tmp_path / "hollowmere-week-costed.xlsx"
    assert cost["result"]["kind"] == core.OK, cost["result"]["message"]
    assert cost["result"]["output"] == str(out) and out.exists()
    assert out.as_uri() in got["open"]
    assert _ties_out(str(out))
    # the same numbers as the command line on the original file (the CLI is the reference here)
    from costing.cli import main

    cli_out = tmp_path / "cli.xlsx"
    assert main(["run", EXAMPLE, "-o", str(cli_out), "--quiet"]) == 0
    summary = list(openpyxl.load_workbook(cli_out, data_only=True)["Summary"].iter_rows(values_only=True))
    ours = list(openpyxl.load_workbook(out, data_only=True)["Summary"].iter_rows(values_only=True))
    col = summary[0].index("total_cost")
    assert [r[col] for r in ours] == [r[col] for r in summary]
    # the user's file is untouched and the document not marked modified
    assert _digest(str(doc)) == before and got["modified"] is False
    print(f"check, goto and cost through LibreOffice in {time.monotonic() - started:.1f} s")


def test_broken_workbook_yields_problems_not_a_crash(office, make_input, tmp_path):
    path = _broken_input(make_input)
    where = _cell_holding(path, "Lanes", "NOWHERE")
    got = office(path, "org.costing.addon:check", "org.costing.addon:cost",
                 f"org.costing.addon:goto?Lanes!{where}")
    check, cost, goto = got["commands"]
    for c in (check, cost):
        assert c["result"]["kind"] == core.PROBLEMS, c["result"]["message"]
        rows = [(r["sheet"], r["cell"], r["severity"]) for r in c["result"]["rows"]]
        assert ("Lanes", where, "error") in rows
        assert c["result"]["output"] is None
        assert c["result"]["dialog_rows"] == [r["text"] for r in c["result"]["rows"]]
    assert "nothing was costed" in cost["result"]["message"]
    assert not (tmp_path / "broken-costed.xlsx").exists()
    assert goto["selection"] == f"$Lanes.${where[0]}${where[1:]}"


def test_set_the_costing_location_stores_the_setting_and_check_still_works(office, tmp_path):
    doc = tmp_path / "hollowmere-week.xlsx"
    shutil.copy(EXAMPLE, doc)
    package = os.path.dirname(os.path.dirname(os.path.abspath(core.__file__)))  # .../costing
    got = office(str(doc), "org.costing.addon:setpath", "org.costing.addon:setpath?/no/such/folder",
                 f"org.costing.addon:setpath?{package}", "org.costing.addon:check")
    asked, missing, stored, check = (c["result"] for c in got["commands"])
    assert all(c["handled"] for c in got["commands"])
    original = asked["setting"]
    # headless, LibreOffice cancels the input dialog at once: nothing changes, no dialog follows
    assert asked["kind"] == "cancelled" and original
    # a folder that is not there: said, and the setting kept
    assert missing["kind"] == core.ERROR and "/no/such/folder" in missing["message"]
    assert missing["setting"] == original and missing["dialog_rows"] == []
    # the costing package folder itself: the folder above it is stored, read back from
    # LibreOffice's configuration
    assert stored["kind"] == core.OK, stored["message"]
    assert stored["setting"] == os.path.dirname(package)
    assert check["kind"] == core.OK, check["message"]
    # put the profile's setting back for the other tests
    back = office(str(doc), f"org.costing.addon:setpath?{original}")["commands"][0]["result"]
    assert back["kind"] == core.OK and back["setting"] == os.pathsep.join(core.search_dirs(original, {}))


@pytest.mark.needs_soffice
def test_screenshot_script_finds_the_menu_toolbar_and_dialogs(tmp_path):
    # tools/addon_screenshots.py on a virtual screen: LibreOffice's accessibility API (the outside
    # reference here) names what the menu and the toolbar show; the pictures are PNGs (Pillow)
    reason = _missing() or next((f"{tool} is not installed (apt-get install -y xvfb imagemagick)"
                                 for tool in ("Xvfb", "import") if not shutil.which(tool)), None)
    if reason:
        pytest.skip(reason)
    done = subprocess.run([sys.executable, os.path.join(ROOT, "tools", "addon_screenshots.py"), "--out",
                           str(tmp_path)], capture_output=True, text=True, timeout=600)
    assert done.returncode == 0, done.stdout + done.stderr
    assert "menu: Check this workbook | Cost this workbook | Set the costing location…" in done.stdout
    assert "toolbar: Check this workbook | Cost this workbook" in done.stdout
    # picking a problem in the dialog (not the goto command) selects its cell and shows the row
    # in full; LibreOffice reports the selection
    assert "picked: WARNING  Shipments!D6 -> $Shipments.$D$6; shown in full: True" in done.stdout
    for name in ("menu", "problems", "location"):
        path = tmp_path / f"addon-{name}.png"
        assert path.stat().st_size < 200 * 1024  # the README's pictures stay small
        with Image.open(path) as im:
            assert im.format == "PNG" and im.width > 300 and im.height > 50
