"""Workbook I/O on the input side: opening a workbook safely (zip and XML guards) and reading its
rows with their cell addresses (``reader``), and writing the blank input ``template``. Knows
openpyxl and the contract; knows nothing of graphs or costs."""
