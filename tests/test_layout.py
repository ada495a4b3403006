"""The package's layout holds: imports go one way, no cycles, small modules, each folder explained.

The rules are the contributor guide's (DEVELOPERS.md, "Layout"): ``cli`` -> ``run`` -> ``tasks``
-> ``results`` -> (``analysis``, ``execution``) -> (``rules``, ``pricing``, ``replay``) -> ``inputs``
-> ``notation``; ``account`` renders run's results (``results``) and nothing below ``cli`` imports
it; only ``cli`` prints or exits; below ``run`` only ``inputs`` reads files and nothing writes
them. Read from the source with the standard library's ``ast`` (common practice, no single source).
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parents[1] / "simulator"

# what each part may import (besides itself); a part is a subpackage or a top-level module
MAY_IMPORT = {
    "notation": set(),
    "inputs": {"notation"},
    "demo": set(),
    "replay": {"inputs", "notation"},
    "pricing": {"replay", "inputs", "notation"},
    "rules": {"pricing", "replay", "inputs", "notation"},
    "execution": {"inputs", "notation"},
    "analysis": {"rules", "pricing", "replay", "inputs", "notation"},
    # the result dataclasses (results.py) hold what analysis made, and account renders them; the
    # tasks a run is cut into (tasks/) price with analysis's pricers and make sites' results
    "results": {"analysis", "rules", "pricing", "replay", "inputs", "notation"},
    "tasks": {"results", "analysis", "execution", "rules", "pricing", "replay", "inputs", "notation"},
    "run": {"tasks", "results", "analysis", "execution", "rules", "pricing", "replay", "inputs", "notation"},
    "account": {"__init__", "results", "analysis", "execution", "rules", "pricing", "replay", "inputs",
                "notation"},
    "cli": {"account", "run", "results", "analysis", "execution", "rules", "pricing", "replay", "inputs",
            "notation", "demo", "__init__"},
    "__init__": {"run", "results", "inputs", "notation"},
}
MAX_LINES = 420  # "about 400 lines"
# calls that end a process outside cli, each with its reason
EXITS = {("execution.lifetime", "os._exit"): "a worker ends itself once the run that started it has ended"}


def _modules() -> dict[str, Path]:
    return {".".join(p.relative_to(PACKAGE).with_suffix("").parts): p for p in PACKAGE.rglob("*.py")}


def _part(module: str) -> str:
    return module.split(".")[0]


def _imports(module: str, path: Path) -> set[str]:
    """Modules of the package that ``module`` imports (dotted, relative to ``simulator``)."""
    package = module.split(".")[:-1]  # the folder the module sits in (its __init__ included)
    known = _modules()
    out = set()
    for node in ast.walk(ast.parse(path.read_text(), filename=str(path))):
        if isinstance(node, ast.ImportFrom):
            if node.level:
                base = package[: len(package) - (node.level - 1)]
                target = base + (node.module.split(".") if node.module else [])
            elif node.module and node.module.split(".")[0] == "simulator":
                target = node.module.split(".")[1:]
            else:
                continue
            for alias in node.names:
                full = ".".join(target + [alias.name])
                out.add(full if full in known else ".".join(target) or "__init__")
        elif isinstance(node, ast.Import):
            out.update(a.name.split(".", 1)[1] for a in node.names if a.name.startswith("simulator."))
    return {m for m in out if m and m != module}


def _graph() -> dict[str, set[str]]:
    return {m: {i if i in _modules() else i + ".__init__" if i + ".__init__" in _modules() else i
                for i in _imports(m, p)} for m, p in _modules().items()}


def test_imports_go_one_way():
    wrong = []
    for module, imported in _graph().items():
        for target in imported:
            a, b = _part(module), _part(target)
            if a != b and b not in MAY_IMPORT[a]:
                wrong.append(f"{module} imports {target}")
    assert not wrong, "imports against the layout:\n" + "\n".join(sorted(wrong))


def _cycle(graph: dict[str, set[str]]) -> list[str] | None:
    state: dict[str, int] = {}
    stack: list[str] = []

    def visit(node: str) -> list[str] | None:
        state[node] = 1
        stack.append(node)
        for nxt in sorted(graph.get(node, ())):
            if state.get(nxt) == 1:
                return stack[stack.index(nxt):] + [nxt]
            if nxt not in state and (found := visit(nxt)):
                return found
        stack.pop()
        state[node] = 2
        return None

    for node in sorted(graph):
        if node not in state and (found := visit(node)):
            return found
    return None


def test_no_import_cycles_between_modules():
    graph = {m: {t for t in ts if not t.endswith("__init__")} for m, ts in _graph().items()}
    assert _cycle(graph) is None, " -> ".join(_cycle(graph))


def test_no_import_cycles_between_parts():
    parts: dict[str, set[str]] = {}
    for module, imported in _graph().items():
        parts.setdefault(_part(module), set()).update(_part(t) for t in imported if _part(t) != _part(module))
    assert _cycle(parts) is None, " -> ".join(_cycle(parts))


@pytest.mark.parametrize("module", sorted(_modules()))
def test_modules_stay_small(module):
    lines = len(_modules()[module].read_text().splitlines())
    assert lines <= MAX_LINES, f"{module} has {lines} lines; split it by concern (about 400 at most)"


def test_only_cli_prints_or_exits():
    offenders = []
    for module, path in _modules().items():
        if module in ("cli",):
            continue
        for node in ast.walk(ast.parse(path.read_text())):
            if isinstance(node, ast.Call):
                f = node.func
                name = f.id if isinstance(f, ast.Name) else f"{getattr(f.value, 'id', '')}.{f.attr}" \
                    if isinstance(f, ast.Attribute) else ""
                if name in ("print", "exit", "sys.exit", "os._exit", "typer.Exit", "quit") \
                        and (module, name) not in EXITS:
                    offenders.append(f"{module}:{node.lineno} {name}")
    assert not offenders, "\n".join(offenders)


@pytest.mark.parametrize("folder", sorted(p.parent.name for p in PACKAGE.glob("*/__init__.py")))
def test_each_folder_says_what_it_holds_and_may_import(folder):
    doc = ast.get_docstring(ast.parse((PACKAGE / folder / "__init__.py").read_text())) or ""
    assert len(doc) > 80 and "May import" in doc


# parts below run: they compute; reading the user's files is the inputs' job, writing the account's
BELOW_RUN = ("notation", "replay", "pricing", "rules", "analysis", "execution", "results", "tasks")
FILE_CALLS = {"open", "read_text", "read_bytes", "write_text", "write_bytes", "to_csv", "to_parquet",
              "to_json", "read_csv", "read_parquet", "read_excel", "savefig", "mkdir", "unlink", "rename",
              "replace", "rmtree"}
# calls of those names below run that are not the user's files, each with its reason
NOT_FILES = {("execution.shared_memory", "unlink"): "a shared-memory segment the run made, in /dev/shm"}


def test_nothing_below_run_touches_files():
    offenders = []
    for module, path in _modules().items():
        if _part(module) not in BELOW_RUN:
            continue
        for node in ast.walk(ast.parse(path.read_text())):
            if isinstance(node, ast.Call):
                f = node.func
                name = f.id if isinstance(f, ast.Name) else f.attr if isinstance(f, ast.Attribute) else ""
                # str.replace is text, not a file: only calls on a path-like receiver are counted
                if name == "replace" and not (isinstance(f, ast.Attribute) and "path" in ast.unparse(f.value).lower()):
                    continue
                if name in FILE_CALLS and (module, name) not in NOT_FILES:
                    offenders.append(f"{module}:{node.lineno} {ast.unparse(f)}")
    assert not offenders, "file access below run:\n" + "\n".join(offenders)
