"""The element registry is the one place that names the kinds; every layer agrees with it."""

import ast
from dataclasses import fields
from pathlib import Path

import pytest

import benchlog
from benchlog.kinds import ELEMENT_KINDS, REGISTRY, SPEC_COMMON_KEYS, SPEC_FAMILY_KEYS, kind

PACKAGE = Path(benchlog.__file__).parent
REGISTRY_FILE = PACKAGE / "kinds.py"


def _kind_spellings(path: Path, base: Path = PACKAGE) -> list[str]:
    """Places in `path` that spell kinds themselves: a tuple/list/set of two or more kind names,
    or a comparison (==, !=, in) with a kind name."""
    tree = ast.parse(path.read_text(encoding="utf-8"), str(path))
    found = []
    for node in ast.walk(tree):
        if isinstance(node, (ast.Tuple, ast.List, ast.Set)):
            names = [e.value for e in node.elts if isinstance(e, ast.Constant) and e.value in ELEMENT_KINDS]
            if len(names) >= 2:
                found.append(f"{path.relative_to(base)}:{node.lineno} {names}")
        elif isinstance(node, ast.Compare):
            for side in [node.left, *node.comparators]:
                if isinstance(side, ast.Constant) and side.value in ELEMENT_KINDS:
                    found.append(f"{path.relative_to(base)}:{node.lineno} compares with {side.value!r}")
    return found


def test_kinds_are_spelled_in_the_registry_only():
    found = [hit for p in sorted(PACKAGE.rglob("*.py")) if p != REGISTRY_FILE for hit in _kind_spellings(p)]
    assert found == []


def test_the_spelling_check_catches_a_tuple_and_a_string_test(tmp_path):
    # The check above must be able to fail: a planted module with both faults is caught twice.
    planted = tmp_path / "planted.py"
    planted.write_text('MOS = ("pmos", "nmos")\n\ndef f(k):\n    return k == "pmos"\n', encoding="utf-8")
    assert len(_kind_spellings(planted, tmp_path)) == 2


def test_simulator_plans_specs_and_cli_know_every_kind():
    from benchlog.cli import build_parser
    from benchlog.sim.elements import NOMINAL, build_element
    from benchlog.sweep.plan import parse_plan

    import numpy as np

    assert set(NOMINAL) == set(ELEMENT_KINDS)
    for name in ELEMENT_KINDS:
        element = build_element(name, np.random.default_rng(0))
        assert element.kind == name and element.truth()["kind"] == name
        plan = parse_plan(f'[element]\nid = "X1"\nkind = "{name}"\n[steps]\nmode = "linear"\nstart_a = 0.1\n'
                          'stop_a = 1.0\ncount = 3\n[limits]\nmax_current_a = 2.0\ncompliance_v = 5.0\n')
        assert plan.element.kind == name
    sim = build_parser()._subparsers._group_actions[0].choices["sim"]
    element = next(a for a in sim._actions if "--element" in a.option_strings)
    assert set(element.choices) == set(ELEMENT_KINDS)


def test_registry_spec_keys_are_the_spec_part_fields():
    from benchlog.analysis.spec import PART_TYPES, Thermal

    assert set(PART_TYPES) == set(SPEC_FAMILY_KEYS)
    for family, keys in SPEC_FAMILY_KEYS.items():
        assert set(keys) == {f.name for f in fields(PART_TYPES[family])}
    assert set(SPEC_COMMON_KEYS) == {"name", "kind", "note", "rth_ja_k_per_w", "tj_max_c", "zth_t_s", "zth_k_per_w",
                                     "zth_u_pct", "rth_jc_k_per_w"}
    assert {"rth_ja_k_per_w", "tj_max_c", "zth_t_s", "zth_k_per_w", "zth_u_pct", "rth_jc_k_per_w"} == \
        {f.name for f in fields(Thermal)}


@pytest.mark.parametrize("name", ELEMENT_KINDS)
def test_each_kind_is_consistent(name):
    k = kind(name)
    assert k.family in SPEC_FAMILY_KEYS
    assert k.has_gate == (k.family == "mosfet")
    if k.has_gate:
        assert k.passive_gate in k.gate_choices and k.gate_to
        assert k.fit_model("body_diode") == "auto" and k.fit_model() == "resistive"
    assert k.fit_model() == ("auto" if k.conduction == "junction" else "resistive")
    assert k.lot_quantity() == ("drop_v" if k.conduction == "junction" else "r_on_ohm")
    # a junction kind's spec may leave out n and the tempco: the registry must supply both
    junction_defaults = (k.default_ideality, k.default_vf_tempco_v_per_k)
    assert all(d is not None for d in junction_defaults) == (k.conduction == "junction")


def test_unknown_kind_names_the_known_ones():
    with pytest.raises(KeyError, match="pmos"):
        kind("zener")
    assert tuple(REGISTRY) == ELEMENT_KINDS
