"""Reading a problem+json answer in API tests: the status and media type asserted,
the document returned."""
from __future__ import annotations

from schemas.problem import PROBLEM_MEDIA_TYPE


def problem(response, status: int) -> dict:
    assert response.status_code == status, response.get_data(as_text=True)
    assert response.mimetype == PROBLEM_MEDIA_TYPE
    return response.get_json(force=True)
