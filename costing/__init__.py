"""costing: least-cost freight routes over a lane network, from a workbook to a workbook."""

__version__ = "0.1.0"
