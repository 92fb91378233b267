"""Small spec texts shared by the spec-side analysis tests (invented parts)."""

from benchlog.specfiles import spec_from_table
from benchlog.tomlcheck import parse_toml


def spec(text: str, source: str = "test.toml"):
    return spec_from_table(parse_toml(text, source), source)


RECT = 'name = "T-RECT"\nkind = "rectifier"\nvf_v = 0.85\nvf_at_a = 2.0\n'
SCHOTTKY = 'name = "T-SCH"\nkind = "schottky"\nvf_v = 0.55\nvf_at_a = 2.0\n'
PMOS = (
    'name = "T-PMOS"\nkind = "pmos"\nrds_on_ohm = 0.026\nrds_on_vgs_v = 10.0\n'
    "vgs_th_v = 2.0\nbody_vf_v = 0.8\nbody_vf_at_a = 1.0\n"
)
