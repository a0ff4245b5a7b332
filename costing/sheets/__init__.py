"""The costed output workbook (xlsxwriter): formulas with cached values, formats, charts and
the map. Knows the output contract; never searches."""
