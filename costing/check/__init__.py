"""Cells to records: every finding is a Problem with sheet, cell and fix (``validate``); scenario
parsing and applying (``scenarios``). Free of openpyxl and xlsxwriter."""
