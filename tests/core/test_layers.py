"""The layers of shared/DESIGN.md, kept by walking every import of the package with `ast`.

Every `import` and `from ... import` counts, at the top of a module or inside a function
(a lazy import is still an arrow). A package may import only the packages its row of the
table allows, plus the leaves; modules form no import cycle; `analysis/` reads no file and
starts no process (it takes arrays or a loaded run).
"""

from __future__ import annotations

import ast
from dataclasses import dataclass
from pathlib import Path

PACKAGE = Path(__file__).resolve().parents[2] / "benchlog"

#: The table of shared/DESIGN.md: package -> the packages it may import (besides itself and the leaves).
ALLOWED: dict[str, frozenset[str]] = {
    "scpi": frozenset(),
    "instruments": frozenset({"scpi"}),
    "sim": frozenset({"scpi"}),
    "runs": frozenset(),
    "analysis": frozenset(),
    "sweep": frozenset({"instruments", "runs", "analysis"}),  # analysis from adaptive stepping only: ONLY_FROM
    # The spec and design file reader sits just above analysis, so analysis reads no file; the layers
    # that take a part spec or a design from the user import it.
    "specfiles": frozenset({"analysis"}),
    "report": frozenset({"analysis", "runs", "specfiles"}),
    "store": frozenset({"runs", "analysis", "specfiles"}),
    "tui": frozenset({"sweep", "runs", "analysis", "report", "store", "specfiles"}),
    "cli": frozenset({"scpi", "instruments", "sim", "sweep", "runs", "analysis", "report", "tui", "store",
                      "specfiles", "docs_gen"}),
    # The generator of the file-format pages reads every file reader's keys: a tool at the top, like cli.
    "docs_gen": frozenset({"sweep", "instruments", "specfiles", "runs"}),
    "__main__": frozenset({"cli"}),
    # A developer tool that composes the simulated bench with a sweep, as cli does; it is to leave the
    # installed package (issue 10, item 7), and this row with it.
    "sample_runs": frozenset({"sim", "sweep", "runs", "instruments", "cli", "specfiles"}),
}
#: Leaves any layer may use: the input error, typed TOML tables, file checks, the element registry, the default ambient, the accuracy type, the one way to write a result (quantity),
#: the package root
#: (its version string). A leaf imports only leaves.
LEAVES = frozenset({"badinput", "tomlcheck", "filecheck", "kinds", "ambient", "accuracy", "quantity", "<root>"})
#: (importing package, imported package) -> the only modules allowed to draw that arrow.
ONLY_FROM = {("sweep", "analysis"): frozenset({"benchlog.sweep.adaptive", "benchlog.sweep.sequential"})}

#: analysis/ modules allowed to read their own files: none (spec and design files are read by
#: benchlog/specfiles.py, run files by report/lot_runs.py and the other callers).
ANALYSIS_READS_FILES: frozenset[str] = frozenset()
#: Imports that mean file or process I/O, and calls that read or write a file.
IO_MODULES = ("multiprocessing", "concurrent", "subprocess", "tomllib", "shutil", "tempfile", "benchlog.runs")
IO_CALLS = ("open", "read_text", "read_bytes", "write_text", "write_bytes", "load_spec", "load_design")


@dataclass(frozen=True)
class Edge:
    source: str  # module that imports
    target: str  # module (or package) imported
    line: int


def modules(root: Path = PACKAGE) -> dict[str, Path]:
    """Dotted module name -> file, for every module of the package at `root`."""
    found = {}
    for path in sorted(root.rglob("*.py")):
        parts = list(path.relative_to(root.parent).with_suffix("").parts)
        if parts[-1] == "__init__":
            parts.pop()
        found[".".join(parts)] = path
    return found


def _resolve(node: ast.ImportFrom, module: str, is_package: bool) -> str:
    if not node.level:
        return node.module or ""
    base = module.split(".") if is_package else module.split(".")[:-1]
    base = base[: len(base) - node.level + 1]
    return ".".join(base + ([node.module] if node.module else []))


def edges(known: dict[str, Path]) -> list[Edge]:
    """Every import of a benchlog module by a benchlog module, wherever it sits in the file."""
    found: list[Edge] = []
    for name, path in known.items():
        tree = ast.parse(path.read_text(encoding="utf-8"), str(path))
        for node in ast.walk(tree):
            if isinstance(node, ast.Import):
                targets = [alias.name for alias in node.names]
            elif isinstance(node, ast.ImportFrom):
                target = _resolve(node, name, path.name == "__init__.py")
                # `from pkg import mod` imports the module pkg.mod; `from mod import name` imports mod
                targets = [f"{target}.{a.name}" if f"{target}.{a.name}" in known else target for a in node.names]
            else:
                continue
            found += [Edge(name, t, node.lineno) for t in targets if t == "benchlog" or t.startswith("benchlog.")]
    return found


def layer(module: str) -> str:
    parts = module.split(".")
    return parts[1] if len(parts) > 1 else "<root>"


def wrong_arrows(found: list[Edge]) -> list[str]:
    wrong = []
    for e in found:
        src, dst = layer(e.source), layer(e.target)
        if src == dst or dst in LEAVES:
            continue
        if src in LEAVES:
            wrong.append(f"{e.source} line {e.line}: the leaf {src} imports {e.target}")
            continue
        allowed = ALLOWED.get(src)
        if allowed is None:
            wrong.append(f"{e.source} line {e.line}: package {src!r} is not in the table")
            continue
        only = ONLY_FROM.get((src, dst))
        if dst in allowed and (only is None or e.source in only):
            continue
        wrong.append(f"{e.source} line {e.line}: {src} -> {dst} ({e.target}) is not an arrow of the table")
    return wrong


def cycles(found: list[Edge], known: dict[str, Path]) -> list[list[str]]:
    """Strongly connected components of more than one module (Tarjan's algorithm, iterative)."""
    graph: dict[str, set[str]] = {m: set() for m in known}
    for e in found:
        if e.target in known and e.target != e.source:
            graph[e.source].add(e.target)
    index: dict[str, int] = {}
    low: dict[str, int] = {}
    stack: list[str] = []
    on_stack: set[str] = set()
    out: list[list[str]] = []
    counter = 0
    for root in graph:
        if root in index:
            continue
        work = [(root, iter(sorted(graph[root])))]
        index[root] = low[root] = counter
        counter += 1
        stack.append(root)
        on_stack.add(root)
        while work:
            node, children = work[-1]
            child = next(children, None)
            if child is not None:
                if child not in index:
                    index[child] = low[child] = counter
                    counter += 1
                    stack.append(child)
                    on_stack.add(child)
                    work.append((child, iter(sorted(graph[child]))))
                elif child in on_stack:
                    low[node] = min(low[node], index[child])
                continue
            work.pop()
            if work:
                low[work[-1][0]] = min(low[work[-1][0]], low[node])
            if low[node] == index[node]:
                component = []
                while True:
                    member = stack.pop()
                    on_stack.discard(member)
                    component.append(member)
                    if member == node:
                        break
                if len(component) > 1:
                    out.append(sorted(component))
    return out


def analysis_io(known: dict[str, Path]) -> list[str]:
    found = []
    for name, path in known.items():
        if layer(name) != "analysis" or name in ANALYSIS_READS_FILES:
            continue
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            if isinstance(node, ast.Import):
                names = [a.name for a in node.names]
            elif isinstance(node, ast.ImportFrom):
                names = [_resolve(node, name, path.name == "__init__.py")]
            elif isinstance(node, ast.Call):
                f = node.func
                called = f.id if isinstance(f, ast.Name) else f.attr if isinstance(f, ast.Attribute) else ""
                if called in IO_CALLS:
                    found.append(f"{name} line {node.lineno}: calls {called}()")
                continue
            else:
                continue
            found += [f"{name} line {node.lineno}: imports {n}" for n in names
                      if any(n == m or n.startswith(m + ".") for m in IO_MODULES)]
    return found


# -- the checks on the package --------------------------------------------------------


def test_every_import_follows_the_arrows_of_the_design():
    assert wrong_arrows(edges(modules())) == []


def test_no_import_cycle():
    assert cycles(edges(modules()), modules()) == []


def test_analysis_reads_no_file_and_starts_no_process():
    assert analysis_io(modules()) == []


def test_the_allow_list_names_modules_that_exist():
    # an allow-list entry for a module that has gone would hide nothing and should go too
    known = modules()
    assert ANALYSIS_READS_FILES <= set(known)
    assert all(m in known for names in ONLY_FROM.values() for m in names)


# -- the checks can fail: each rule against a small made-up package ----------------------


def _fake_package(tmp_path: Path, files: dict[str, str]) -> dict[str, Path]:
    root = tmp_path / "benchlog"
    for rel, text in files.items():
        path = root / rel
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_text(text)
    return modules(root)


def test_a_lazy_import_against_an_arrow_is_found(tmp_path):
    known = _fake_package(tmp_path, {
        "__init__.py": "", "sweep/__init__.py": "", "sim/__init__.py": "",
        "sweep/bench.py": "def start():\n    from benchlog.sim.server import serve\n    return serve\n",
        "sim/server.py": "def serve(): ...\n",
    })
    wrong = wrong_arrows(edges(known))
    assert wrong == ["benchlog.sweep.bench line 2: sweep -> sim (benchlog.sim.server) is not an arrow of the table"]


def test_an_arrow_allowed_only_from_one_module_is_refused_from_another(tmp_path):
    known = _fake_package(tmp_path, {
        "__init__.py": "", "sweep/__init__.py": "", "analysis/__init__.py": "", "analysis/fits.py": "",
        "sweep/adaptive.py": "from benchlog.analysis import fits\n",
        "sweep/runner.py": "def f():\n    from ..analysis.fits import x\n",
    })
    assert [w.split(":")[0] for w in wrong_arrows(edges(known))] == ["benchlog.sweep.runner line 2"]


def test_a_leaf_importing_a_layer_is_found(tmp_path):
    known = _fake_package(tmp_path, {"__init__.py": "", "badinput.py": "import benchlog.runs\n",
                                     "runs/__init__.py": "", "tomlcheck.py": "from .badinput import BadInput\n"})
    assert wrong_arrows(edges(known)) == ["benchlog.badinput line 1: the leaf badinput imports benchlog.runs"]


def test_a_cycle_through_a_function_level_import_is_found(tmp_path):
    known = _fake_package(tmp_path, {
        "__init__.py": "", "tui/__init__.py": "", "tui/views/__init__.py": "from .help import Help\nVIEWS = {}\n",
        "tui/views/help.py": "class Help:\n    def keys(self):\n        from . import VIEWS\n        return VIEWS\n",
    })
    assert cycles(edges(known), known) == [["benchlog.tui.views", "benchlog.tui.views.help"]]


def test_file_and_process_io_in_analysis_is_found(tmp_path):
    known = _fake_package(tmp_path, {
        "__init__.py": "", "analysis/__init__.py": "",
        "analysis/lot.py": "def lot(paths):\n    from concurrent.futures import ProcessPoolExecutor\n"
                           "    return [open(p).read() for p in paths]\n",
    })
    assert sorted(analysis_io(known)) == ["benchlog.analysis.lot line 2: imports concurrent.futures",
                                          "benchlog.analysis.lot line 3: calls open()"]
