"""The ambient assumed when none is given is written in one place (`benchlog.ambient`), and every default uses it."""

from __future__ import annotations

import ast
import inspect
from pathlib import Path

from benchlog.ambient import DEFAULT_AMBIENT_C
from benchlog.analysis.fits import DEFAULT_TEMPERATURE_C
from benchlog.analysis.predict import predict
from benchlog.sim.config import SimConfig
from benchlog.sweep.plan import Element, parse_plan

PACKAGE = Path(__file__).resolve().parents[2] / "benchlog"


def _ambient_literals() -> list[str]:
    """Numbers written as the default or fallback of something named *ambient* (outside benchlog/ambient.py)."""
    found = []
    for path in sorted(PACKAGE.rglob("*.py")):
        if path.name == "ambient.py" and path.parent == PACKAGE:
            continue
        tree = ast.parse(path.read_text(encoding="utf-8"))
        for node in ast.walk(tree):
            pairs: list[tuple[str, ast.AST | None]] = []
            if isinstance(node, ast.AnnAssign) and isinstance(node.target, ast.Name):
                pairs.append((node.target.id, node.value))
            elif isinstance(node, ast.Assign):
                pairs += [(t.id, node.value) for t in node.targets if isinstance(t, ast.Name)]
            elif isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef)):
                a = node.args
                positional = a.posonlyargs + a.args
                pairs += [(arg.arg, d) for arg, d in zip(positional[len(positional) - len(a.defaults):], a.defaults)]
                pairs += [(arg.arg, d) for arg, d in zip(a.kwonlyargs, a.kw_defaults)]
            elif isinstance(node, ast.Call) and any(isinstance(x, ast.Constant) and x.value == "ambient_c"
                                                    for x in node.args[:1]):
                pairs += [("ambient_c", x) for x in node.args[1:2]]
            for name, value in pairs:
                if "ambient" in name.lower() and isinstance(value, ast.Constant) and isinstance(value.value, float):
                    found.append(f"{path.relative_to(PACKAGE.parent)} line {value.lineno}: {name} = {value.value}")
    return found


def test_no_ambient_default_is_written_as_a_number():
    assert _ambient_literals() == []


def test_every_default_ambient_is_the_one_value():
    # 25 °C: the reference temperature of datasheet ratings (common practice)
    assert DEFAULT_AMBIENT_C == 25.0
    plan = parse_plan("[element]\nid = 'X'\nkind = 'resistor'\n[steps]\nmode = 'list'\ncurrents_a = [0.5]\n"
                      "[limits]\nmax_current_a = 1.0\ncompliance_v = 2.0\n", "plan.toml")
    assert plan.element.ambient_c == DEFAULT_AMBIENT_C
    assert Element(id="X", kind="resistor").ambient_c == DEFAULT_AMBIENT_C
    assert SimConfig().ambient_c == DEFAULT_AMBIENT_C
    assert inspect.signature(predict).parameters["ambient_c"].default == DEFAULT_AMBIENT_C
    assert DEFAULT_TEMPERATURE_C == DEFAULT_AMBIENT_C
