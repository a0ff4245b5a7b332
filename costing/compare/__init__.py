"""``costing compare OLD NEW``: read two costed workbooks by their headers, diff, write the
differences. Never searches."""
