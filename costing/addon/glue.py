"""UNO glue of the Route costing extension (shipped in the .oxt as ``route_costing.py``).

A protocol handler for ``org.costing.addon:*`` URLs, which the Route costing menu and toolbar
dispatch:

- ``org.costing.addon:check`` checks the open workbook (``costing check``),
- ``org.costing.addon:cost`` costs it (``costing run``) and opens the costed workbook,
- ``org.costing.addon:goto?Sheet!A1`` selects a cell (what picking a problem row does),
- ``org.costing.addon:setpath`` asks for the folder costing is installed in and stores it in the
  extension's PythonPath setting (``setpath?FOLDERS`` stores FOLDERS without asking).

Kept thin: it stores a copy of the document as .xlsx, calls ``costing_addon_core`` (plain
Python, tested without UNO) and shows its Outcome in a dialog. ``dispatchWithNotification``
hands the Outcome back as JSON, for macros and the tests. Nothing here lets a Python
traceback reach the user: failures end in a dialog, with the details in a log file.
"""

import json
import os
import shutil
import sys
import tempfile
import traceback

import costing_addon_core as core
import uno
import unohelper
from com.sun.star.awt import XActionListener, XItemListener
from com.sun.star.frame import XDispatch, XDispatchProvider, XNotifyingDispatch
from com.sun.star.frame.DispatchResultState import FAILURE, SUCCESS
from com.sun.star.lang import XInitialization, XServiceInfo

IMPLEMENTATION = "org.costing.addon.RouteCosting"
PROTOCOL = "org.costing.addon:"
XLSX_FILTER = "Calc MS Excel 2007 XML"
LOG = os.path.join(tempfile.gettempdir(), "route-costing.log")


def _prop(name, value):
    p = uno.createUnoStruct("com.sun.star.beans.PropertyValue")
    p.Name, p.Value = name, value
    return p


class _Pick(unohelper.Base, XItemListener):
    """When a problem's row is picked: shows its whole text below the list and selects its cell
    in the document."""

    def __init__(self, rows, select, detail):
        self.rows, self.select, self.detail = rows, select, detail

    def itemStateChanged(self, event):
        try:
            row = self.rows[event.Selected]
            self.detail.setText(row.text)
            if row.sheet and row.cell:
                self.select(row.sheet, row.cell)
        except Exception:
            _log("selecting a problem's cell")

    def disposing(self, _source):
        pass


class _Browse(unohelper.Base, XActionListener):
    """The Folder… button of the location dialog: a folder picker that fills the text field."""

    def __init__(self, ctx, field):
        self.ctx, self.field = ctx, field

    def actionPerformed(self, _event):
        try:
            picker = self.ctx.ServiceManager.createInstanceWithContext(
                "com.sun.star.ui.dialogs.FolderPicker", self.ctx)
            current = self.field.getText().split(os.pathsep)[0].strip()
            if current and os.path.isdir(os.path.expanduser(current)):
                picker.setDisplayDirectory(uno.systemPathToFileUrl(os.path.expanduser(current)))
            if picker.execute() == 1:
                self.field.setText(uno.fileUrlToSystemPath(picker.getDirectory()))
        except Exception:
            _log("choosing a folder")

    def disposing(self, _source):
        pass


def _add(model, kind, name, box, props):
    """Put a control of `kind` (FixedText, Edit, ListBox, Button) named `name` in the dialog
    `model` at `box` (x, y, width, height in dialog units), with the model properties `props`."""
    control = model.createInstance(f"com.sun.star.awt.UnoControl{kind}Model")
    control.PositionX, control.PositionY, control.Width, control.Height = box
    for key, value in props.items():
        setattr(control, key, value)
    model.insertByName(name, control)


def _log(what):
    try:
        with open(LOG, "a", encoding="utf-8") as f:
            f.write(f"--- while {what}\n{traceback.format_exc()}\n")
    except OSError:
        pass


class RouteCosting(unohelper.Base, XDispatchProvider, XNotifyingDispatch, XDispatch, XInitialization,
                   XServiceInfo):
    def __init__(self, ctx, *args):
        self.ctx = ctx
        self.frame = None
        self.dialogs = 0

    # XInitialization: the frame whose menu was used
    def initialize(self, args):
        if args:
            self.frame = args[0]

    # XServiceInfo
    def getImplementationName(self):
        return IMPLEMENTATION

    def supportsService(self, name):
        return name == "com.sun.star.frame.ProtocolHandler"

    def getSupportedServiceNames(self):
        return ("com.sun.star.frame.ProtocolHandler",)

    # XDispatchProvider
    def queryDispatch(self, url, _target, _flags):
        return self if url.Complete.startswith(PROTOCOL) else None

    def queryDispatches(self, requests):
        return tuple(self.queryDispatch(r.FeatureURL, r.FrameName, r.SearchFlags) for r in requests)

    # XDispatch
    def dispatch(self, url, args):
        self._run(url, args)

    def addStatusListener(self, listener, url):
        try:
            state = uno.createUnoStruct("com.sun.star.frame.FeatureStateEvent")
            state.FeatureURL, state.IsEnabled, state.Source = url, True, self
            listener.statusChanged(state)
        except Exception:
            _log("reporting the menu state")

    def removeStatusListener(self, _listener, _url):
        pass

    # XNotifyingDispatch: the Outcome as JSON, for macros and tests
    def dispatchWithNotification(self, url, args, listener):
        result = self._run(url, args)
        if listener is not None:
            event = uno.createUnoStruct("com.sun.star.frame.DispatchResultEvent")
            event.Source = self
            event.State = SUCCESS if result.get("kind") == core.OK else FAILURE
            event.Result = json.dumps(result)
            listener.dispatchFinished(event)

    # ------------------------------------------------------------------ commands
    def _run(self, url, args):
        command = url.Complete[len(PROTOCOL):]
        options = {a.Name: a.Value for a in (args or ())}
        try:
            doc = self._document()
            if command.startswith("goto"):
                where = command.partition("?")[2] or options.get("Where", "")
                sheet, _, cell = where.rpartition("!")
                return {"kind": core.OK, "selected": self._select(doc, sheet.strip("'"), cell)}
            if command.startswith("setpath"):
                _, asked, value = command.partition("?")
                outcome = self._setpath(value if asked else options.get("Location"))
                if outcome is None:  # the user cancelled: nothing to say
                    return {"kind": "cancelled", "setting": self._setting()}
                result = outcome.as_dict()
                result["setting"] = self._setting()
                result["dialog_rows"] = self._show(doc, outcome)
                return result
            if doc is None or not doc.supportsService("com.sun.star.sheet.SpreadsheetDocument"):
                outcome = core.Outcome(core.ERROR, "Route costing", "Open the input workbook in Calc "
                                       "first: Route costing works on the spreadsheet in this window.")
            elif command in ("check", "cost"):
                outcome = self._costing(doc, command, options.get("Objective") or None)
            else:
                outcome = core.Outcome(core.ERROR, "Route costing", f"Unknown command {command!r}.")
        except Exception as e:
            _log(f"running {command}")
            doc = None
            outcome = core.Outcome(core.ERROR, "Route costing: something went wrong",
                                   f"{type(e).__name__}: {e}\n\nNothing in your workbook was changed. "
                                   f"Details are in {LOG}; please report them with the workbook.")
        result = outcome.as_dict()
        result["dialog_rows"] = self._show(doc, outcome)
        return result

    def _document(self):
        if self.frame is not None and self.frame.getController() is not None:
            return self.frame.getController().getModel()
        desktop = self.ctx.ServiceManager.createInstanceWithContext("com.sun.star.frame.Desktop", self.ctx)
        return desktop.getCurrentComponent()

    def _costing(self, doc, command, objective):
        missing = core.locate(self._setting())
        if missing is not None:
            return missing
        url = doc.getURL()
        doc_path = uno.fileUrlToSystemPath(url) if url.startswith("file:") else None
        title = doc.getTitle() if hasattr(doc, "getTitle") else doc.Title
        name = os.path.basename(doc_path) if doc_path else title
        work = tempfile.mkdtemp(prefix="route-costing-")
        try:
            copy = core.copy_path(doc_path, title, work)
            # storeToURL writes a copy: the document keeps its own file, name and modified state
            doc.storeToURL(uno.systemPathToFileUrl(copy),
                           (_prop("FilterName", XLSX_FILTER), _prop("Overwrite", True)))
            if command == "check":
                return core.check(copy, name)
            output = core.output_path(doc_path, title, tempfile.gettempdir())
            outcome = core.cost(copy, name, output, objective)
        finally:
            shutil.rmtree(work, ignore_errors=True)
        if outcome.output:
            desktop = self.ctx.ServiceManager.createInstanceWithContext("com.sun.star.frame.Desktop",
                                                                       self.ctx)
            desktop.loadComponentFromURL(uno.systemPathToFileUrl(outcome.output), "_blank", 0, ())
        return outcome

    def _settings(self, update=False):
        provider = self.ctx.ServiceManager.createInstanceWithContext(
            "com.sun.star.configuration.ConfigurationProvider", self.ctx)
        return provider.createInstanceWithArguments(
            "com.sun.star.configuration.ConfigurationUpdateAccess" if update else
            "com.sun.star.configuration.ConfigurationAccess",
            (_prop("nodepath", "/org.costing.addon.Settings/Paths"),))

    def _setting(self):
        try:
            return self._settings().getByName("PythonPath") or ""
        except Exception:
            _log("reading the PythonPath setting")
            return ""

    def _setpath(self, typed):
        """Store the costing location `typed` (None: ask for it); None when the user cancels."""
        if typed is None:
            typed = self._ask_location(self._setting())
            if typed is None:
                return None
        loaded = sys.modules.get("costing")
        loaded_from = os.path.dirname(os.path.dirname(loaded.__file__)) if loaded is not None and \
            getattr(loaded, "__file__", None) else None
        outcome, value = core.set_location(typed, loaded_from)
        if value is not None:
            access = self._settings(update=True)
            access.replaceByName("PythonPath", value)
            access.commitChanges()
        return outcome

    def _ask_location(self, current):
        """A small dialog with a text field (and a Folder… button); the text, or None if cancelled."""
        smgr = self.ctx.ServiceManager
        model = smgr.createInstanceWithContext("com.sun.star.awt.UnoControlDialogModel", self.ctx)
        width = 300
        model.Width, model.Height = width, 84
        model.Title = "Route costing: costing location"

        def add(kind, name, x, y, w, h, **props):
            _add(model, kind, name, (x, y, w, h), props)

        add("FixedText", "label", 6, 6, width - 12, 30, MultiLine=True, NoLabel=True,
            Label="The folder costing is installed in: its virtual environment (such as ~/.costing) "
                  "or site-packages folder. Several folders are separated by " + repr(os.pathsep) +
                  ". Leave it empty to use LibreOffice's own Python.")
        add("Edit", "location", 6, 40, width - 64, 14, Text=current or "")
        add("Button", "browse", width - 54, 40, 48, 14, Label="Folder…")
        add("Button", "ok", width - 120, 64, 54, 14, Label="OK", PushButtonType=1, DefaultButton=True)
        add("Button", "cancel", width - 60, 64, 54, 14, Label="Cancel", PushButtonType=2)
        dialog = smgr.createInstanceWithContext("com.sun.star.awt.UnoControlDialog", self.ctx)
        dialog.setModel(model)
        dialog.createPeer(smgr.createInstanceWithContext("com.sun.star.awt.Toolkit", self.ctx), None)
        field = dialog.getControl("location")
        dialog.getControl("browse").addActionListener(_Browse(self.ctx, field))
        self.dialogs += 1
        answer = dialog.execute()  # headless: returns 0 at once, read as Cancel
        typed = field.getText()
        dialog.dispose()
        return typed if answer == 1 else None

    def _select(self, doc, sheet, cell):
        sheets = doc.getSheets()
        if not sheet or not cell or not sheets.hasByName(sheet):
            return False
        target = sheets.getByName(sheet)
        controller = doc.getCurrentController()
        controller.setActiveSheet(target)
        controller.select(target.getCellRangeByName(cell))
        return True

    # ------------------------------------------------------------------ the dialog
    def _show(self, doc, outcome):
        """Show `outcome` in a modal dialog; returns the rows the dialog's list holds."""
        try:
            smgr = self.ctx.ServiceManager
            model = smgr.createInstanceWithContext("com.sun.star.awt.UnoControlDialogModel", self.ctx)
            width = 420
            # about 4 dialog units a character and 9 a line (Calc's default dialog font)
            message_h = 9 * core.text_lines(outcome.message, (width - 12) // 4) + 4
            list_h = 150 if outcome.rows else 0
            model.Width, model.Height = width, message_h + list_h + 36
            model.Title = outcome.title

            def add(kind, name, x, y, w, h, **props):
                _add(model, kind, name, (x, y, w, h), props)

            # NoLabel: the text is shown as it is, no letter taken as a keyboard shortcut
            add("FixedText", "message", 6, 6, width - 12, message_h, Label=outcome.message, MultiLine=True,
                NoLabel=True)
            texts = tuple(r.text for r in outcome.rows)
            if texts:
                add("ListBox", "problems", 6, message_h + 10, width - 12, list_h - 44,
                    StringItemList=texts, HelpText="Pick a problem to see all of it and go to its cell.")
                # the picked row in full (a row is often wider than the list), selectable to copy
                add("Edit", "detail", 6, message_h + list_h - 30, width - 12, 36, MultiLine=True,
                    ReadOnly=True, VScroll=True, Text=texts[0])
            add("Button", "close", width - 66, model.Height - 20, 60, 14, Label="Close",
                PushButtonType=1, DefaultButton=True)
            dialog = smgr.createInstanceWithContext("com.sun.star.awt.UnoControlDialog", self.ctx)
            dialog.setModel(model)
            toolkit = smgr.createInstanceWithContext("com.sun.star.awt.Toolkit", self.ctx)
            dialog.createPeer(toolkit, None)
            shown = list(dialog.getControl("problems").getItems()) if texts else []
            if texts:
                listbox = dialog.getControl("problems")
                listbox.selectItemPos(0, True)
                listbox.addItemListener(_Pick(outcome.rows, (lambda s, c: self._select(doc, s, c))
                                              if doc is not None else (lambda s, c: None),
                                              dialog.getControl("detail")))
            self.dialogs += 1
            dialog.execute()  # headless: returns at once (LibreOffice cancels dialogs there)
            dialog.dispose()
            return shown
        except Exception:
            _log("showing the dialog")
        try:  # the plain message box, so the user always hears how it ended
            toolkit = self.ctx.ServiceManager.createInstanceWithContext("com.sun.star.awt.Toolkit", self.ctx)
            parent = self.frame.getContainerWindow() if self.frame is not None else None
            box = toolkit.createMessageBox(parent, uno.Enum("com.sun.star.awt.MessageBoxType", "INFOBOX"), 1,
                                           outcome.title, "\n".join([outcome.message] + [r.text for r in
                                                                                          outcome.rows]))
            box.execute()
        except Exception:
            _log("showing the message box")
        return None


g_ImplementationHelper = unohelper.ImplementationHelper()
g_ImplementationHelper.addImplementation(RouteCosting, IMPLEMENTATION,
                                         ("com.sun.star.frame.ProtocolHandler",))
