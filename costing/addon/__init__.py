"""The LibreOffice Calc extension "Route costing": `core` (plain logic), `glue` (UNO), `build`."""
