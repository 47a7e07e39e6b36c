"""The finding codes are a contract: every code the checks can raise is registered,
documented in docs/engineering.md's table and in the OpenAPI enum, with the same severity."""
from __future__ import annotations

import re
from pathlib import Path

from schemas.results import FindingSchema
from service.fitment.checks import CHECK_NAMES
from service.fitment.codes import FINDING_CODES

REPO = Path(__file__).resolve().parents[2]


def _documented_table() -> dict[str, tuple[str, str]]:
    text = (REPO / "docs" / "engineering.md").read_text()
    section = text[text.index("## Finding codes"):]
    section = section[:section.index("\n## ", 3)]
    # A code raised at more than one severity lists them: `warn, fail`.
    rows = re.findall(r"^\| `([A-Z_]+)` \| ([a-z_]+) \| ([a-z]+(?:, [a-z]+)*)", section, re.MULTILINE)
    return {code: (check, severity) for code, check, severity in rows}


def test_every_code_the_checks_raise_is_registered():
    source = (REPO / "service" / "fitment" / "checks.py").read_text()
    raised = set(re.findall(r'"([A-Z]+(?:_[A-Z]+)+)"', source))
    assert raised <= set(FINDING_CODES), raised - set(FINDING_CODES)


def test_the_documented_table_lists_every_registered_code_with_its_check_and_severity():
    assert _documented_table() == FINDING_CODES


def test_the_openapi_document_lists_the_registry_without_closing_it():
    """Every registered code is named in the field's description; the field is an open
    string, not an enum, so a client generated before a new code still reads it."""
    code = FindingSchema().fields["code"]
    assert code.validate is None
    assert all(name in code.metadata["description"] for name in FINDING_CODES)


def test_each_registered_code_names_a_real_check():
    assert {check for check, _ in FINDING_CODES.values()} - {"any"} <= set(CHECK_NAMES)
