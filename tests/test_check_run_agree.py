"""`check` and `run` report the same findings on the same input, each once (issue 13)."""

from __future__ import annotations

import re

EXAMPLE = "examples/hollowmere-week.xlsx"


def _findings(text: str) -> list[str]:
    return [line for line in text.splitlines() if re.match(r"(error|warning): ", line)]


def test_check_and_run_report_the_same_findings_once(cli, tmp_path):
    code, out, _ = cli("check", EXAMPLE)
    assert code == 0
    checked = _findings(out)
    assert "5 warning(s) above, no errors" in out and "note(s)" not in out
    code, _, err = cli("run", EXAMPLE, "-o", str(tmp_path / "o.xlsx"))
    assert code == 0
    ran = _findings(err)
    # a late arrival needs the route and its hours, so only `run` can find it; every other
    # finding is the same, once
    late = [line for line in ran if "after the end of its due_date" in line]
    ran = [line for line in ran if line not in late]
    assert ran == checked  # the split-over-vehicles warnings included, none twice
    assert len(set(ran)) == len(ran)
    assert sum("split over" in line for line in checked) == 4
