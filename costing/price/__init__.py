"""Rate arithmetic and money: leg costs, tolls, handling, fuel surcharge, emissions (``rates``,
``cost``) and driving-time rules (``rules``). Knows the Model; not graphs' internals, not workbooks."""
