"""`plugfit validate --server URL`: send the build list to a running service.

The list goes as it is (CSV or JSON) to `POST /v1/fit-checks/batch`, so the service
reads it with the very code the embedded mode uses and the results are the same.
Failures are sorted by what the user should do: fix the file or the options
(`ServerRefused`, exit 2) or fix the connection or the service (`ServerUnreachable`,
exit 3).
"""
from __future__ import annotations

from collections.abc import Iterable
from typing import Any

BATCH_PATH = "/v1/fit-checks/batch"
CONNECT_TIMEOUT_S = 10.0


class ServerUnreachable(RuntimeError):
    """No usable answer: connection refused, timeout, a 5xx, or not plugfit's JSON."""


class ServerRefused(ValueError):
    """The service answered with a client error (the list, the key or the URL is wrong)."""

    def __init__(self, status: int, detail: str, errors: Any = None) -> None:
        super().__init__(f"the service refused the build list ({status}): {detail}")
        self.status = status
        self.errors = errors


def batch_url(server: str) -> str:
    """The batch endpoint under `server`, given with or without its `/v1`."""
    base = server.strip().rstrip("/")
    if not base.startswith(("http://", "https://")):
        base = "http://" + base
    return base[:-3] + BATCH_PATH if base.endswith("/v1") else base + BATCH_PATH


def post_build_list(server: str, body: bytes, *, is_csv: bool, api_key: str | None = None, units: str = "metric",
                    require: Iterable[str] = (), timeout_s: float = 300.0) -> dict[str, Any]:
    """The service's answer `{"summary", "results"}` for the build list in `body`."""
    import requests

    headers = {"Content-Type": "text/csv; charset=utf-8" if is_csv else "application/json",
               "Accept": "application/json"}
    if api_key:
        headers["Authorization"] = f"Bearer {api_key}"
    params = {"units": units}
    require = list(require)
    if require:
        params["require"] = ",".join(require)
    url = batch_url(server)
    try:
        response = requests.post(url, data=body, headers=headers, params=params,
                                 timeout=(CONNECT_TIMEOUT_S, timeout_s))
    except requests.RequestException as exc:
        raise ServerUnreachable(f"cannot reach {url}: {type(exc).__name__}: {exc}") from None
    if response.status_code >= 500:
        raise ServerUnreachable(f"{url} answered {response.status_code}: {_detail(response)}")
    if response.status_code >= 400:
        problem = _json(response) or {}
        raise ServerRefused(response.status_code, _detail(response), problem.get("errors"))
    answer = _json(response)
    if not isinstance(answer, dict) or not isinstance(answer.get("results"), list) or "summary" not in answer:
        raise ServerUnreachable(f"{url} did not answer with a plugfit batch result (is it a plugfit service?)")
    return answer


def _json(response: Any) -> Any:
    try:
        return response.json()
    except ValueError:
        return None


def _detail(response: Any) -> str:
    problem = _json(response)
    if isinstance(problem, dict) and problem.get("detail"):
        return str(problem["detail"])
    return response.reason or "no detail"
