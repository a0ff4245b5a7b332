"""workbook stage."""
