"""No module of the service forks a process or switches Python's garbage collector
(the house rules: a web worker handles a request in its own process, with the
interpreter as it is configured). Only the command line may start processes, through
the standard library's `concurrent.futures` (`plugfit validate --jobs`).

One call to the collector is allowed, in one place: `gc.freeze()` in
`service/web/serving.py`'s `settle_worker`, gunicorn's post-worker-init hook. It runs
once per worker before any request, leaves the collector enabled, and only stops full
collections from walking the objects the worker loaded at start (its docstring says
why); nothing is switched inside a request."""
from __future__ import annotations

import ast
from pathlib import Path

import pytest

SERVICE = Path(__file__).resolve().parents[2] / "service"
# Calls that fork, or change what the collector does for the whole process.
FORBIDDEN_CALLS = {("os", "fork"), ("os", "forkpty"), ("os", "register_at_fork"), ("gc", "disable"),
                   ("gc", "enable"), ("gc", "freeze"), ("gc", "set_threshold")}
PROCESS_MODULES = {"multiprocessing", "concurrent.futures"}  # the command line's alone


def _calls(tree: ast.AST) -> set[tuple[str, str]]:
    """`module.function(...)` calls, as (module, function)."""
    return {(node.func.value.id, node.func.attr) for node in ast.walk(tree)
            if isinstance(node, ast.Call) and isinstance(node.func, ast.Attribute)
            and isinstance(node.func.value, ast.Name)}


def _imports(tree: ast.AST) -> set[str]:
    names = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            names.update(alias.name for alias in node.names)
        elif isinstance(node, ast.ImportFrom) and node.module:
            names.add(node.module)
    return names


@pytest.mark.parametrize("path", sorted(SERVICE.rglob("*.py")), ids=lambda path: path.relative_to(SERVICE).as_posix())
def test_no_service_module_forks_or_switches_the_collector(path):
    tree = ast.parse(path.read_text(encoding="utf-8"))
    if path == SERVICE / "web" / "serving.py":
        assert _calls(tree) & FORBIDDEN_CALLS == {("gc", "freeze")}
        _only_in_settle_worker(tree, ("gc", "freeze"))
    else:
        assert _calls(tree) & FORBIDDEN_CALLS == set()
        assert "gc" not in _imports(tree)
    if path.parent != SERVICE / "cli":
        assert _imports(tree) & PROCESS_MODULES == set()


def _only_in_settle_worker(tree: ast.AST, call: tuple[str, str]) -> None:
    """`call` appears in `settle_worker` and nowhere else in the module."""
    functions = [node for node in ast.walk(tree) if isinstance(node, ast.FunctionDef)]
    holders = [function.name for function in functions if call in _calls(function)]
    assert holders == ["settle_worker"]


def test_the_check_catches_what_the_old_batch_module_did():
    tree = ast.parse("import gc\nimport os\nfrom concurrent.futures import ProcessPoolExecutor\n"
                     "gc.disable()\npid = os.fork()\n")
    assert _calls(tree) & FORBIDDEN_CALLS == {("gc", "disable"), ("os", "fork")}
    assert {"gc", "concurrent.futures"} <= _imports(tree)
