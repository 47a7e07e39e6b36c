"""Every problem type the service can send is listed in the table of errors (docs/api.md),
so clients that switch on `type` know them all."""
from __future__ import annotations

import re
from pathlib import Path

from service.web.problems import TYPES_BY_STATUS

REPO = Path(__file__).resolve().parents[2]


def test_every_problem_type_the_service_sends_is_documented():
    code = " ".join(path.read_text() for path in (REPO / "service").rglob("*.py"))
    sent = set(TYPES_BY_STATUS.values()) | set(re.findall(r'slug="([a-z-]+)"', code))
    documented = set(re.findall(r"problem/([a-z-]+)`", (REPO / "docs" / "api.md").read_text()))
    assert sent <= documented, f"not in docs/api.md's table of errors: {sorted(sent - documented)}"
