"""``costing compare OLD NEW``: read two costed workbooks by their headers, diff, write the
differences (``diff``), and the cost bridge from the old total to the new one cause at a time
(``bridge``: old routes priced again at the new rates through costing.price). Never searches."""
