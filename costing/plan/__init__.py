"""From networks to routes for the whole week: per shipment the objective, candidate vehicles and
search (``route``); what finance compares beside the chosen routes (``analysis``). The place
for consolidation into shared vehicle runs."""
