"""Demo scenario: one week of shipments for Hollowmere Freight, an invented carrier.

Hollowmere runs 36 sites across the Netherlands, Belgium, western Germany and northern France:
cross-dock hubs at Tilburg, Duisburg and Lille-Lesquin, four rail terminals, two port quays, own
depots and customer sites. The company, customers and every figure are invented; coordinates sit
near real towns. The data plants a few faults on purpose (see the comments) so validation and
no-route reporting have something to show. Two invented groupage carriers (one pricing in
pounds sterling) offer tariffs between regional zones, so small loads can be bought instead of
run on own vehicles; customers have quoted prices and finance has a few invoices to check.
"""

from __future__ import annotations

import datetime as _dt

from costing.workbook import template

# Every name and number below is invented for this demo. Coordinates are WGS84 decimal degrees.
# Road lane km = straight line x a detour factor of 1.15 to 1.42; hours = km / 62 to 77 km/h.
# Rail lane km = straight line x 1.15 to 1.27; hours = km / 47 to 54 km/h.

_SETTINGS = [
    ("currency", "EUR", "All money in euro."),
    ("objective", "cost", "Shipments without an objective take the cheapest route."),
    ("detour_factor", 1.25, "Road km per straight-line km for lanes with a blank distance."),
    ("default_speed_kmh", 70, "Speed for lanes with blank drive_hours."),
    ("value_of_time_per_hour", 45, "What an hour of transit is worth to Hollowmere's planners."),
    ("driving_rules", "eu_561_2006", "EU driving-time rules as a planning estimate (breaks, daily rest)."),
    ("fuel_price_per_litre", 1.62, "Diesel price per litre, for the fuel surcharge."),
    ("volumetric_kg_per_m3", 333, "Carriers charge light, bulky goods at 333 kg per m3."),
    ("kg_per_loading_metre", 1750, "Carriers charge unstackable goods at 1,750 kg per loading metre."),
]

_DEPOT_COLUMNS = ("depot_id", "name", "latitude", "longitude", "kind", "handling_cost",
                  "handling_hours")
_DEPOTS = [
    ("D01", "Hollowmere Venlo DC", 51.3704, 6.1724, "depot", 28, 0.5),
    ("D02", "Hollowmere Tilburg Cross-Dock", 51.5606, 5.0919, "hub", 45, 1.0),
    ("D03", "Hollowmere Duisburg Cross-Dock", 51.4344, 6.7623, "hub", 55, 1.25),
    ("D04", "Hollowmere Lille-Lesquin Cross-Dock", 50.5890, 3.0830, "hub", 40, 0.75),
    ("D05", "Hollowmere Barendrecht Rail Terminal", 51.8560, 4.5340, "terminal", 65, 1.5),
    ("D06", "Hollowmere Blerick Rail Terminal", 51.3790, 6.1330, "terminal", 60, 1.5),
    ("D07", "Hollowmere Koeln-Eifeltor Rail Terminal", 50.8950, 6.9300, "terminal", 70, 1.5),
    ("D08", "Hollowmere Dourges Rail Terminal", 50.4400, 2.9850, "terminal", 60, 1.25),
    ("D09", "Hollowmere Waalhaven Quay", 51.8800, 4.4400, "port", 50, 1.0),
    ("D10", "Hollowmere Antwerp North Quay", 51.2800, 4.3300, "port", 50, 1.0),
    ("D11", "Hollowmere Utrecht Depot", 52.0907, 5.1214, "depot", 25, 0.5),
    ("D12", "Hollowmere Amsterdam West Depot", 52.3870, 4.8300, "depot", 25, 0.5),
    ("D13", "Hollowmere Alkmaar Depot", 52.6320, 4.7480, "depot", 20, 0.5),
    ("D14", "Hollowmere Den Helder Depot", 52.9560, 4.7600, "depot", 20, 0.5),
    # CUT-OFF SITE: on the island of Texel. Its only lane (L003, the ferry) is closed this week,
    # so nothing reaches it by road: shipment S007 ends as no_route.
    ("D15", "Duneveld Dairy, Oudeschild (Texel)", 53.0400, 4.8500, "customer", 10, 0.25),
    ("D16", "Hollowmere Eindhoven Depot", 51.4416, 5.4697, "depot", 25, 0.5),
    ("D17", "Hollowmere Nijmegen Depot", 51.8126, 5.8372, "depot", 25, 0.5),
    ("D18", "Hollowmere Zwolle Depot", 52.5168, 6.0830, "depot", 22, 0.5),
    ("D19", "Hollowmere Groningen Depot", 53.2194, 6.5665, "depot", 22, 0.5),
    ("D20", "Bramblecote Foods, Breda", 51.5719, 4.7683, "customer", 12, 0.3),
    ("D21", "Hollowmere Gent Depot", 51.0543, 3.7174, "depot", 25, 0.5),
    ("D22", "Hollowmere Vilvoorde Depot", 50.9280, 4.4290, "depot", 25, 0.5),
    ("D23", "Hollowmere Liege Depot", 50.6326, 5.5797, "depot", 25, 0.5),
    ("D24", "Copperfinch Tools, Hasselt", 50.9307, 5.3325, "customer", 10, 0.25),
    ("D25", "Hollowmere Aachen Depot", 50.7753, 6.0839, "depot", 25, 0.5),
    ("D26", "Emberlight Glass, Duesseldorf", 51.2277, 6.7735, "customer", 15, 0.3),
    ("D27", "Umberfield Steel, Essen", 51.4556, 7.0116, "customer", 15, 0.4),
    ("D28", "Hollowmere Muenster Depot", 51.9607, 7.6261, "depot", 25, 0.5),
    ("D29", "Foxmarsh Textiles, Moenchengladbach", 51.1805, 6.4428, "customer", 10, 0.25),
    ("D30", "Larkspire Print, Arras", 50.2910, 2.7775, "customer", 10, 0.25),
    ("D31", "Saltmarrow Seafood, Amiens", 49.8941, 2.2958, "customer", 12, 0.3),
    ("D32", "Reedwhistle Plastics, Dunkerque", 51.0343, 2.3768, "customer", 12, 0.3),
    ("D33", "Pebblestone Tiles, Valenciennes", 50.3570, 3.5234, "customer", 10, 0.25),
    ("D34", "Thistledown Bedding, Namur", 50.4674, 4.8720, "customer", 10, 0.25),
    ("D35", "Willowquay Wines, Bonn", 50.7374, 7.0982, "customer", 10, 0.25),
    ("D36", "Oakhollow Toys, Kortrijk", 50.8279, 3.2649, "customer", 10, 0.25),
    # the long haul to the north: far enough for the driving-time rules to call a daily rest
    ("D37", "Hollowmere Bremen Depot", 53.0570, 8.6640, "depot", 25, 0.5),
    ("D38", "Gorsemoor Cables, Hamburg", 53.5430, 10.0800, "customer", 12, 0.3),
]

_LANE_COLUMNS = ("lane_id", "from_depot", "to_depot", "mode", "distance_km", "drive_hours", "toll",
                 "fixed_cost", "two_way", "max_weight_t", "hazmat_allowed", "open")
_LANES = [
    # North Holland, up to the Texel ferry
    ("L001", "D14", "D13", "road", 45.2, 0.63, 0, 0, True, None, True, True),
    ("L002", "D13", "D12", "road", 37.4, 0.49, 0, 0, True, None, True, True),
    # Texel ferry, suspended this week (closed): the only lane to D15, see the Depots comment
    ("L003", "D14", "D15", "road", 14.0, 0.19, 0, 95, True, None, True, False),
    ("L004", "D12", "D11", "road", 51.8, 0.77, 0, 0, True, None, True, True),
    # through a river tunnel: no dangerous goods
    ("L005", "D12", "D09", "road", 74.3, 1.03, 0, 0, True, None, False, True),
    ("L006", "D12", "D18", "road", 108.4, 1.48, 0, 0, True, None, True, True),
    ("L007", "D11", "D05", "road", 63.9, 0.98, 0, 0, True, None, True, True),
    ("L008", "D11", "D17", "road", 72.7, 1.1, 0, 0, True, None, True, True),
    ("L009", "D11", "D18", "road", 94.6, 1.24, 0, 0, True, None, True, True),
    ("L010", "D11", "D02", "road", 79.9, 1.08, 0, 0, True, None, True, True),
    ("L011", "D18", "D19", "road", 98.1, 1.4, 0, 0, True, None, True, True),
    # PLANTED TYPO: 16.7 km should read 167.3 km (the depots are 121.9 km apart in a straight line);
    # validation flags it as a warning.
    ("L012", "D18", "D28", "road", 16.7, 2.26, 45, 0, True, None, True, True),
    ("L013", "D19", "D28", "road", 204.4, 2.76, 45, 0, True, None, True, True),
    # blank distance_km: estimated by the tool
    ("L014", "D09", "D05", "road", None, 0.13, 0, 0, True, None, True, True),
    ("L015", "D05", "D20", "road", 47.6, 0.73, 0, 0, True, None, True, True),
    # one-way port exit route
    ("L016", "D09", "D20", "road", 47.8, 0.71, 0, 0, False, None, True, True),
    ("L017", "D20", "D02", "road", 30.3, 0.42, 0, 0, True, None, True, True),
    ("L018", "D02", "D16", "road", 33.9, 0.48, 0, 0, True, None, True, True),
    ("L019", "D02", "D17", "road", 71.7, 0.98, 0, 0, True, None, True, True),
    ("L020", "D16", "D01", "road", 66.4, 0.92, 0, 0, True, None, True, True),
    # blank distance_km: estimated by the tool (DC to rail terminal shuttle)
    ("L021", "D01", "D06", "road", None, 0.05, 0, 0, True, None, True, True),
    ("L022", "D17", "D01", "road", 68.8, 0.93, 0, 0, True, None, True, True),
    # parallel pair 1, Breda - Antwerp: motorway with km charge, or country road without
    ("L023", "D20", "D10", "road", 52.5, 0.69, 10, 0, True, None, True, True),
    ("L024", "D20", "D10", "road", 63.1, 1.0, 0, 0, True, None, True, True),
    ("L025", "D02", "D10", "road", 84.6, 1.3, 17, 0, True, None, True, True),
    ("L026", "D16", "D24", "road", 75.6, 1.1, 15, 0, True, None, True, True),
    # parallel pair 2, Venlo - Duisburg: motorway with truck toll, or country road with a 30 t bridge
    ("L027", "D01", "D03", "road", 48.2, 0.63, 14, 0, True, None, True, True),
    ("L028", "D01", "D03", "road", 58.1, 0.94, 0, 0, True, 30, True, True),
    ("L029", "D06", "D29", "road", 39.5, 0.61, 12, 0, True, None, True, True),
    ("L030", "D29", "D26", "road", 29.3, 0.43, 9, 0, True, None, True, True),
    # Rhine ferry crossing: ticket 25 per vehicle, 30 t limit (loaded artics are too heavy)
    ("L031", "D29", "D03", "road", 48.5, 0.78, 0, 25, True, 30, True, True),
    ("L032", "D03", "D26", "road", 30.9, 0.48, 9, 0, True, None, True, True),
    ("L033", "D03", "D27", "road", 20.9, 0.33, 6, 0, True, None, True, True),
    ("L034", "D27", "D28", "road", 88.5, 1.18, 27, 0, True, None, True, True),
    # one-way return route, westbound only
    ("L035", "D28", "D03", "road", 103.6, 1.59, 31, 0, False, None, True, True),
    ("L036", "D26", "D07", "road", 49.4, 0.74, 15, 0, True, None, True, True),
    ("L037", "D07", "D35", "road", 28.1, 0.41, 8, 0, True, None, True, True),
    ("L038", "D25", "D07", "road", 74.7, 1.1, 22, 0, True, None, True, True),
    ("L039", "D25", "D29", "road", 63.2, 0.9, 19, 0, True, None, True, True),
    ("L040", "D25", "D23", "road", 51.5, 0.79, 10, 0, True, None, True, True),
    ("L041", "D17", "D03", "road", 90.3, 1.2, 27, 0, True, None, True, True),
    ("L042", "D03", "D07", "road", 71.7, 1.12, 22, 0, True, None, True, True),
    ("L043", "D10", "D22", "road", 50.0, 0.7, 10, 0, True, None, True, True),
    # under the Scheldt by tunnel: ADR tunnel category D (see _LANE_EXTRA), closed to S004's load
    ("L044", "D10", "D21", "road", 59.0, 0.82, 12, 0, True, None, True, True),
    ("L045", "D21", "D22", "road", 61.7, 0.86, 12, 0, True, None, True, True),
    ("L046", "D22", "D24", "road", 75.6, 1.01, 15, 0, True, None, True, True),
    ("L047", "D24", "D23", "road", 49.7, 0.71, 10, 0, True, None, True, True),
    # blank drive_hours: estimated by the tool
    ("L048", "D22", "D34", "road", 77.8, None, 16, 0, True, None, True, True),
    ("L049", "D34", "D23", "road", 66.1, 0.99, 13, 0, True, None, True, True),
    # blank distance_km: estimated by the tool
    ("L050", "D21", "D36", "road", None, 0.61, 9, 0, True, None, True, True),
    ("L051", "D36", "D04", "road", 37.9, 0.59, 4, 0, True, None, True, True),
    ("L052", "D22", "D04", "road", 122.1, 1.74, 24, 0, True, None, True, True),
    ("L053", "D04", "D08", "road", 24.8, 0.34, 0, 0, True, None, True, True),
    # one-way: Lille out to Dunkerque, back along the coast to Gent
    ("L054", "D04", "D32", "road", 91.0, 1.4, 0, 0, False, None, True, True),
    ("L055", "D32", "D21", "road", 108.7, 1.65, 22, 0, False, None, True, True),
    ("L056", "D04", "D30", "road", 47.4, 0.7, 12, 0, True, None, True, True),
    ("L057", "D08", "D30", "road", 25.5, 0.35, 0, 0, True, None, True, True),
    # blank drive_hours: estimated by the tool
    ("L058", "D30", "D31", "road", 68.6, None, 18, 0, True, None, True, True),
    ("L059", "D04", "D33", "road", 50.1, 0.77, 0, 0, True, None, True, True),
    ("L060", "D33", "D34", "road", 112.8, 1.55, 23, 0, True, None, True, True),
    ("L061", "D08", "D33", "road", 50.9, 0.8, 0, 0, True, None, True, True),
    ("L062", "D04", "D31", "road", 122.9, 1.78, 32, 0, True, None, True, True),
    ("L063", "D16", "D23", "road", 116.7, 1.77, 23, 0, True, None, True, True),
    ("L064", "D17", "D18", "road", 109.8, 1.55, 0, 0, True, None, True, True),
    ("L065", "D09", "D10", "road", 90.0, 1.36, 18, 0, True, None, True, True),
    ("L066", "D24", "D25", "road", 74.9, 1.13, 15, 0, True, None, True, True),
    # rail between every pair of the four terminals, and a rail link from the Antwerp quay
    ("L067", "D05", "D06", "rail", 149.4, 2.99, 0, 0, True, None, True, True),
    ("L068", "D06", "D07", "rail", 97.9, 2.0, 0, 0, True, None, True, True),
    ("L069", "D05", "D07", "rail", 244.3, 5.09, 0, 0, True, None, True, True),
    ("L070", "D05", "D08", "rail", 236.4, 4.38, 0, 0, True, None, True, True),
    ("L071", "D06", "D08", "rail", 281.0, 5.4, 0, 0, True, None, True, True),
    ("L072", "D07", "D08", "rail", 356.3, 7.58, 0, 0, True, None, True, True),
    ("L073", "D10", "D06", "rail", 149.3, 3.18, 0, 0, True, None, True, True),
    # north to Bremen and Hamburg (the long haul)
    ("L074", "D28", "D37", "road", 178.4, 2.48, 38, 0, True, None, True, True),
    ("L075", "D37", "D38", "road", 121.6, 1.69, 26, 0, True, None, True, True),
    ("L076", "D19", "D37", "road", 187.9, 2.68, 0, 0, True, None, True, True),
]

_RATE_COLUMNS = ("vehicle", "mode", "per_km", "per_hour", "per_trip", "payload_t", "fuel_l_per_100km",
                 "co2e_kg_per_litre", "min_charge", "fuel_included_at", "tare_t",
                 "fuel_empty_l_per_100km", "wtw_co2e_kg_per_litre", "pallet_places", "volume_m3")
# Invented but plausible rates in EUR. Road fuel is diesel: 2.57082 kg CO2e per litre tank-to-wheel
# and 3.19747 well-to-wheel (UK DESNZ 2025, diesel with its average biofuel blend). Fuel use runs
# from empty to fully laden as in the DEFRA 2007 load-dependent table (Hansard, 4 June 2007):
# articulated 31.1 to 44.8 l/100 km, rigid 23.6 to 34.0; the van's 9.0 to 10.5 is invented. The
# per_km rates include fuel at 1.45 per litre; the Settings price of 1.62 adds a fuel surcharge
# (on fuel_l_per_100km). tare_t is the empty weight, checked with the load against lane weight
# limits (L028, L031). The rail wagon has no fuel figures of its own: its emissions use the rail
# default intensity (see the Run sheet), and its rate includes fuel (no surcharge).
# Pallet places and volumes: a 13.6 m curtainsider, a 7.5 m rigid box, a 3.5 t panel van.
_RATES = [
    ("artic_40t", "road", 1.05, 38.0, 45.0, 24.5, 44.8, 2.57082, 180.0, 1.45, 14.5, 31.1, 3.19747, 33, 90),
    ("rigid_18t", "road", 0.82, 34.0, 35.0, 9.0, 34.0, 2.57082, 120.0, 1.45, 8.5, 23.6, 3.19747, 15, 40),
    ("van_3t5", "road", 0.48, 30.0, 20.0, 1.1, 10.5, 2.57082, 65.0, 1.45, 2.3, 9.0, 3.19747, 3, 12),
    ("rail_wagon", "rail", 0.55, 20.0, 120.0, 60.0, None, None, 250.0, None, 23.0, None, None, None, None),
]

_SHIPMENT_COLUMNS = ("shipment_id", "origin", "destination", "weight_t", "vehicle", "objective",
                     "hazmat", "customer")
_SHIPMENTS = [
    ("S001", "D01", "D27", 18.0, None, None, False, "Umberfield Steel"),
    ("S002", "D02", "D10", 6.5, None, None, False, "Saltmarrow Seafood"),
    # dangerous goods: must avoid the tunnel lane L005
    ("S003", "D09", "D12", 8.0, None, None, True, "Kettlewick Chemicals"),
    # dangerous goods with ADR tunnel code D/E (a tanker: D applies): must avoid the category D
    # tunnel of lane L044 (see _SHIPMENT_EXTRA)
    ("S004", "D10", "D21", 14.0, None, None, True, "Velvetash Coatings"),
    # heavier than one artic: 38 t over 2 artics
    ("S005", "D10", "D03", 38.0, "artic_40t", None, False, "Umberfield Steel"),
    # heavier than one artic: 55 t over 3 artics
    ("S006", "D09", "D26", 55.0, "artic_40t", None, False, "Emberlight Glass"),
    # to the cut-off Texel site D15: no road route this week -> no_route
    ("S007", "D12", "D15", 16.0, "artic_40t", None, False, "Duneveld Dairy"),
    # rail terminal to rail terminal
    ("S008", "D05", "D07", 48.0, "rail_wagon", None, False, "Gildwater Beverages"),
    ("S009", "D08", "D06", 60.0, None, None, False, "Pebblestone Tiles"),
    ("S010", "D07", "D05", 22.0, "rail_wagon", None, False, "Willowquay Wines"),
    ("S011", "D20", "D16", 3.2, None, None, False, "Bramblecote Foods"),
    ("S012", "D16", "D20", 0.8, None, None, False, "Bramblecote Foods"),
    ("S013", "D21", "D30", 7.5, None, None, False, "Larkspire Print"),
    ("S014", "D36", "D08", 11.0, None, None, False, "Oakhollow Toys"),
    ("S015", "D22", "D31", 4.4, None, "time", False, "Saltmarrow Seafood"),
    ("S016", "D17", "D27", 21.0, "artic_40t", None, False, "Umberfield Steel"),
    ("S017", "D11", "D10", 2.1, None, None, False, "Ashgrove Paints"),
    ("S018", "D12", "D19", 5.6, "rigid_18t", None, False, "Mossbank Furniture"),
    ("S019", "D28", "D29", 9.0, None, None, False, "Foxmarsh Textiles"),
    ("S020", "D04", "D32", 16.5, None, None, False, "Reedwhistle Plastics"),
    ("S021", "D32", "D10", 12.0, None, None, False, "Reedwhistle Plastics"),
    ("S022", "D23", "D35", 1.6, None, "time", False, "Willowquay Wines"),
    ("S023", "D25", "D24", 0.4, "van_3t5", None, False, "Copperfinch Tools"),
    ("S024", "D09", "D04", 24.0, None, None, False, "Hazelrun Machinery"),
    ("S025", "D34", "D22", 3.9, None, "distance", False, "Thistledown Bedding"),
    ("S026", "D03", "D01", 19.5, None, None, False, "Ironpeel Fasteners"),
    ("S027", "D07", "D29", 6.0, None, None, False, "Foxmarsh Textiles"),
    ("S028", "D18", "D28", 10.0, None, None, False, "Reedwhistle Plastics"),
    ("S029", "D13", "D11", 1.0, "van_3t5", None, False, "Quillfeather Paper"),
    ("S030", "D16", "D26", 8.8, None, "time", False, "Emberlight Glass"),
    ("S031", "D24", "D20", 2.7, None, None, False, "Bramblecote Foods"),
    ("S032", "D33", "D21", 13.0, None, None, False, "Pebblestone Tiles"),
    ("S033", "D10", "D16", 23.5, None, None, False, "Nightjar Pharma"),
    ("S034", "D31", "D36", 5.0, None, None, False, "Oakhollow Toys"),
    ("S035", "D05", "D17", 15.0, None, "distance", False, "Gildwater Beverages"),
    ("S036", "D26", "D23", 4.2, "rigid_18t", None, False, "Emberlight Glass"),
    ("S037", "D19", "D14", 0.9, None, None, False, "Saltmarrow Seafood"),
    ("S038", "D27", "D17", 17.0, None, None, False, "Umberfield Steel"),
    ("S039", "D21", "D08", 20.0, None, "time", False, "Hazelrun Machinery"),
    ("S040", "D02", "D03", 12.5, None, None, False, "Ironpeel Fasteners"),
    ("S041", "D30", "D04", 2.2, None, None, False, "Larkspire Print"),
    ("S042", "D35", "D25", 7.0, None, None, False, "Willowquay Wines"),
    ("S043", "D12", "D02", 9.5, None, None, False, "Mossbank Furniture"),
    ("S044", "D08", "D27", 33.0, None, None, False, "Umberfield Steel"),
    # the long haul: Amiens to Hamburg, over nine hours of driving -> breaks and a daily rest
    ("S045", "D31", "D38", 12.0, "artic_40t", None, False, "Gorsemoor Cables"),
    # heavy load next to the 30 t Rhine ferry (L031): a loaded artic is too heavy for it
    ("S046", "D29", "D03", 22.0, "artic_40t", None, False, "Ironpeel Fasteners"),
    # heavy coast-to-Rhine load: road to the Dourges terminal, rail east, road to the customer
    ("S047", "D30", "D35", 58.0, None, None, False, "Willowquay Wines"),
]


_SCENARIO_COLUMNS = ("scenario", "sheet", "key", "column", "change")
# Two what-ifs for finance: diesel up 12 % (through the fuel surcharge), and the Blerick rail
# terminal's lines closed for works (which routes change, and what it costs).
_SCENARIOS = [
    ("fuel_up_12", "Settings", "fuel_price_per_litre", "value", "+12%"),
    ("blerick_rail_closed", "Lanes", "L067", "open", "=no"),
    ("blerick_rail_closed", "Lanes", "L068", "open", "=no"),
    ("blerick_rail_closed", "Lanes", "L071", "open", "=no"),
    ("blerick_rail_closed", "Lanes", "L073", "open", "=no"),
]


# Columns added with issue 12, per row id: ADR tunnel categories on lanes, tunnel codes on shipments.
_LANE_EXTRA = {"L044": {"tunnel_category": "D"}}
_SHIPMENT_EXTRA = {"S004": {"tunnel_code": "D/E"}}


def _rows(columns: tuple[str, ...], table: list[tuple]) -> list[dict]:
    return [dict(zip(columns, row, strict=True)) for row in table]


# The week: Monday 7 to Wednesday 9 December 2026. Shipments ready on the same day may share
# vehicles; a blank ready_date is Monday (the first day). S045, the long haul, is due the same
# day (it makes it with little to spare); the others are due within two or three days.
_MONDAY = _dt.date(2026, 12, 7)
_READY = {"S001": 1, "S016": 1, "S026": 1, "S038": 1, "S044": 1, "S008": 2, "S010": 2, "S027": 2}
_DUE = {"S045": 0, "S002": 1, "S017": 1, "S034": 2, "S041": 2, "S022": 1, "S015": 1}
# (pallets, volume m3) of the loads that give them; the rest are weight alone
_SIZES = {"S002": (14, 38.0), "S017": (6, 12.0), "S011": (8, 20.0), "S012": (2, 5.0),
          "S034": (10, 26.0), "S041": (4, 9.0), "S022": (4, 11.0), "S037": (2, 6.0)}


# loading metres of the unstackable loads (0.4 m of trailer floor per euro pallet)
_LOADING_METRES = {"S002": 5.6, "S011": 3.2, "S034": 4.0}
# What Hollowmere quoted its customers (revenue, EUR) and the invoices finance checks this week:
# carriers' invoices for loads they took, and the fleet cost centre's for S040.
_QUOTED = {"S001": 340, "S002": 290, "S004": 360, "S011": 240, "S012": 175, "S013": 330, "S014": 270,
           "S016": 380, "S017": 260, "S019": 420, "S020": 290, "S026": 250, "S031": 280, "S037": 190,
           "S038": 395, "S040": 430, "S041": 95, "S044": 1150}
_INVOICED = {"S013": 302.76, "S017": 345.0, "S031": 231.28, "S037": 228.4, "S040": 420.0}


def _shipment_rows() -> list[dict]:
    rows = _rows(_SHIPMENT_COLUMNS, _SHIPMENTS)
    for row in rows:
        sid = row["shipment_id"]
        row["ready_date"] = _MONDAY + _dt.timedelta(days=_READY.get(sid, 0))
        if sid in _DUE:
            row["due_date"] = row["ready_date"] + _dt.timedelta(days=_DUE[sid])
        if sid in _SIZES:
            row["pallets"], row["volume_m3"] = _SIZES[sid]
        for col, table in (("loading_metres", _LOADING_METRES), ("quoted_price", _QUOTED),
                           ("invoiced", _INVOICED)):
            if sid in table:
                row[col] = table[sid]
    return rows


# Carrier tariff zones: Hollowmere's sites by region. Texel (D15), Bremen (D37) and Hamburg (D38)
# are in no zone, so each is a zone of its own that no tariff serves.
_ZONES = {
    "NL-North": ("D11", "D12", "D13", "D14", "D18", "D19"),
    "NL-South": ("D01", "D02", "D05", "D06", "D09", "D16", "D17", "D20"),
    "BE": ("D10", "D21", "D22", "D23", "D24", "D34", "D36"),
    "DE-West": ("D03", "D07", "D25", "D26", "D27", "D28", "D29", "D35"),
    "FR-North": ("D04", "D08", "D30", "D31", "D32", "D33"),
}

_TARIFF_COLUMNS = ("carrier", "from_zone", "to_zone", "min_kg", "max_kg", "price_per_100kg", "min_charge",
                   "currency", "price_per_consignment", "valid_from", "valid_to", "price_per_pallet",
                   "weight_step_kg")
_DECEMBER = (_dt.date(2026, 12, 1), _dt.date(2026, 12, 31))


def _tariff_rows() -> list[dict]:
    """Two invented groupage carriers: Marrowby Groupage (EUR, per started 100 kg, a fuel index)
    in the Netherlands and Belgium, and Tealbrook Freight (GBP, per pallet, December prices, an
    expired November row) in northern France, Belgium and from NL-North to Belgium."""
    rows = []
    marrowby = ((0, 1000, 14.0), (1000, 2500, 9.2), (2500, 5000, 7.4), (5000, 10000, 5.9))
    for a, b in (("NL-North", "NL-North"), ("NL-South", "NL-South"), ("NL-North", "BE"), ("BE", "NL-South"),
                 ("NL-South", "BE"), ("NL-South", "DE-West")):
        for lo, hi, price in marrowby:
            rows.append(("Marrowby Groupage", a, b, lo, hi, price, 65.0, "EUR", 8.5, None, None, None, 100))
    tealbrook = {("NL-North", "BE"): ((0, 2500, 8.4), (2500, 10000, 6.9)),
                 ("FR-North", "FR-North"): ((0, 2500, 8.1), (2500, 10000, 6.6)),
                 ("FR-North", "BE"): ((0, 5000, 7.0), (5000, 10000, 5.2)),
                 ("BE", "FR-North"): ((0, 5000, 6.2), (5000, 10000, 3.4))}
    for (a, b), bands in tealbrook.items():
        for lo, hi, price in bands:
            rows.append(("Tealbrook Freight", a, b, lo, hi, price, 55.0, "GBP", 6.0, *_DECEMBER, 2.5, None))
    # last month's offer, no longer valid this week
    rows.append(("Tealbrook Freight", "FR-North", "FR-North", 0, 10000, 5.0, 45.0, "GBP", 6.0,
                 _dt.date(2026, 11, 1), _dt.date(2026, 11, 30), 2.5, None))
    return _rows(_TARIFF_COLUMNS, rows)


# Marrowby's fuel index (diesel price per litre in EUR -> per cent of the freight charge)
_FUEL_BANDS = [("Marrowby Groupage", 1.4, 1.6, 9.0), ("Marrowby Groupage", 1.6, 1.8, 11.5),
               ("Marrowby Groupage", 1.8, None, 14.0)]
# Tealbrook prices in pounds sterling; the rate Hollowmere's bank gave on Friday (invented)
_CURRENCIES = [("GBP", 1.16, _dt.date(2026, 12, 4))]


def _with_extra(rows: list[dict], key: str, extra: dict[str, dict]) -> list[dict]:
    return [{**r, **extra.get(r[key], {})} for r in rows]


def example_data() -> dict[str, list[dict]]:
    """The demo workbook's rows: sheet name -> list of row dicts keyed by column name."""
    return {
        "Settings": _rows(("setting", "value", "note"), _SETTINGS),
        "Depots": _rows(_DEPOT_COLUMNS, _DEPOTS),
        "Lanes": _with_extra(_rows(_LANE_COLUMNS, _LANES), "lane_id", _LANE_EXTRA),
        "Rates": _rows(_RATE_COLUMNS, _RATES),
        "Shipments": _with_extra(_shipment_rows(), "shipment_id", _SHIPMENT_EXTRA),
        "Scenarios": _rows(_SCENARIO_COLUMNS, _SCENARIOS),
        "Zones": [{"depot_id": d, "zone": z} for z, depots in _ZONES.items() for d in depots],
        "Tariffs": _tariff_rows(),
        "Currencies": _rows(("currency", "rate", "date"), _CURRENCIES),
        "Fuel surcharges": _rows(("carrier", "fuel_price_from", "fuel_price_to", "surcharge_pct"),
                                 _FUEL_BANDS),
    }


def write_example(path: str) -> None:
    """Write the demo workbook to `path`."""
    template.write_template(path, example_data())
