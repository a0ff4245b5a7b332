"""The workbook contracts: what the input sheets hold (``inputs``), the row records the read stage hands
to the check stage (``rows``), and what the output sheets hold. Plain data; no I/O."""
