"""Shared helpers: small input workbooks written through the template writer, and a CLI
runner. The data here is invented test data, not check values."""

from __future__ import annotations

import copy
import os

import pytest

from costing.cli import main
from costing.workbook.template import write_template
from tests import spreadsheet_app

BASE = {
    "Settings": [
        {"setting": "currency", "value": "EUR"},
        {"setting": "objective", "value": "cost"},
        {"setting": "detour_factor", "value": 1.25},
        {"setting": "default_speed_kmh", "value": 70},
    ],
    "Depots": [
        {"depot_id": "A", "name": "Alpha", "latitude": 52.0, "longitude": 5.0, "kind": "depot",
         "handling_cost": 20, "handling_hours": 0.5},
        {"depot_id": "B", "name": "Bravo", "latitude": 52.5, "longitude": 5.5, "kind": "hub",
         "handling_cost": 40, "handling_hours": 1},
        {"depot_id": "C", "name": "Charlie", "latitude": 53.0, "longitude": 6.0, "kind": "customer",
         "handling_cost": 10},
        {"depot_id": "D", "name": "Delta", "latitude": 51.0, "longitude": 4.0},
    ],
    "Lanes": [
        {"lane_id": "L1", "from_depot": "A", "to_depot": "B", "mode": "road", "distance_km": 80,
         "drive_hours": 1.2, "toll": 5},
        {"lane_id": "L2", "from_depot": "B", "to_depot": "C", "mode": "road", "distance_km": 85,
         "drive_hours": 1.3},
        {"lane_id": "L3", "from_depot": "A", "to_depot": "C", "mode": "road", "distance_km": 190,
         "drive_hours": 2.6},
        {"lane_id": "L4", "from_depot": "A", "to_depot": "D", "mode": "road", "distance_km": 140,
         "open": False},
    ],
    "Rates": [
        {"vehicle": "truck", "mode": "road", "per_km": 1.1, "per_hour": 35, "per_trip": 40,
         "payload_t": 24, "fuel_l_per_100km": 30, "co2e_kg_per_litre": 2.5, "min_charge": 300},
    ],
    "Shipments": [
        {"shipment_id": "S1", "origin": "A", "destination": "C", "weight_t": 10},
        {"shipment_id": "S2", "origin": "A", "destination": "C", "weight_t": 50},
        {"shipment_id": "S3", "origin": "A", "destination": "D", "weight_t": 5},
    ],
}


def base_data() -> dict:
    return copy.deepcopy(BASE)


@pytest.fixture
def make_input(tmp_path):
    """make_input(data=None, name='in.xlsx') -> path of a workbook written from `data`."""

    def _make(data: dict | None = None, name: str = "in.xlsx") -> str:
        path = tmp_path / name
        write_template(str(path), base_data() if data is None else data)
        return str(path)

    return _make


@pytest.fixture
def cli(capsys):
    """cli(*args) -> (exit code, stdout, stderr)."""

    def _run(*args: str):
        try:
            code = main(list(args))
        except SystemExit as e:  # argparse usage errors
            code = e.code
        out = capsys.readouterr()
        return code, out.out, out.err

    return _run


# ---------------------------------------------------------------------------------------------
# tests that need LibreOffice Calc: @pytest.mark.needs_soffice. Without soffice they skip locally
# (the reason is printed: -rs in pyproject.toml) and FAIL in CI (CI=true), so the recalculation
# checks can never silently go missing there.


def in_ci() -> bool:
    return os.environ.get("CI", "").strip().lower() == "true"  # as .ci/run tests it


def pytest_configure(config):
    config.addinivalue_line("markers", "needs_soffice: recalculates in LibreOffice Calc (soffice)")


def pytest_runtest_setup(item):
    if item.get_closest_marker("needs_soffice") is None or spreadsheet_app.soffice() is not None:
        return
    if in_ci():
        pytest.fail("CI=true but LibreOffice Calc (soffice) is not installed; the recalculation "
                    "check must run in CI (.ci/run installs libreoffice-calc)", pytrace=False)
    pytest.skip("LibreOffice Calc is not installed (apt-get install libreoffice-calc); CI installs it")
