"""Hypothesis fuzzing of the run-file reader and loader: any bytes give events or BadInput, nothing else."""

from __future__ import annotations

import tempfile
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from benchlog.badinput import BadInput
from benchlog.runs import RunWriter, load, read_events
from benchlog.runs.events import Point

from .samples import every_kind

#: many generated inputs: a stress check (`-m "not slow"` skips it)
pytestmark = pytest.mark.slow

_DIR = Path(tempfile.mkdtemp(prefix="benchlog-fuzz-"))


def _good_bytes() -> bytes:
    path = _DIR / "good.run"
    if not path.exists():
        with RunWriter(path, fsync=False) as writer:
            for event in every_kind():
                writer.write(event)
    return path.read_bytes()


GOOD = _good_bytes()
FUZZ = settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])


def _outcome(content: bytes):
    """('ok', points) or ('bad', line) for both readers; anything else escapes and fails the test."""
    path = _DIR / "fuzz.run"
    path.write_bytes(content)
    results = []
    for reader in (lambda p: sum(isinstance(e, Point) for e in read_events(p)), lambda p: len(load(p)[0])):
        try:
            results.append(("ok", reader(path)))
        except BadInput as exc:
            assert exc.where.startswith("line ") and "\n" not in exc.line()
            results.append(("bad", exc.where))
    return results


@FUZZ
@given(st.binary(max_size=400))
def test_arbitrary_bytes_give_only_bad_input(content):
    _outcome(content)


@FUZZ
@given(st.binary(max_size=300))
def test_good_header_then_arbitrary_bytes(tail):
    header = GOOD.split(b"\n", 1)[0] + b"\n"
    _outcome(header + tail)


@st.composite
def mutated(draw):
    data = bytearray(GOOD)
    for _ in range(draw(st.integers(1, 4))):
        at = draw(st.integers(0, len(data) - 1))
        action = draw(st.sampled_from(["replace", "insert", "delete"]))
        byte = draw(st.sampled_from(list(b"\t\n|.-+eE019 PCVx{}\",:\xff") + [draw(st.integers(0, 255))]))
        if action == "replace":
            data[at] = byte
        elif action == "insert":
            data.insert(at, byte)
        else:
            del data[at]
    return bytes(data)


@FUZZ
@given(mutated())
def test_mutated_run_file_gives_events_or_bad_input_and_both_readers_agree(content):
    (slow_kind, slow_value), (fast_kind, fast_value) = _outcome(content)
    # the loader's fast path may never accept what the line reader refuses
    assert (fast_kind, fast_value) == (slow_kind, slow_value)


TOKENS = ["", "0", "1", "-2.5", "1e-3", "1e400", "nan", "inf", " 3", "1.0", "7.5", "x", "CC", "CV",
          "up", "down", "overload", "unsettled|overload", "A|", "|", "2e9", "-0"]


@FUZZ
@given(st.lists(st.lists(st.sampled_from(TOKENS), min_size=9, max_size=13), min_size=1, max_size=4))
def test_fuzzed_point_lines_agree_between_readers(rows):
    header = GOOD.split(b"\n", 1)[0] + b"\n"
    body = b"".join(("P\t" + "\t".join(r) + "\n").encode() for r in rows)
    assert _outcome(header + body)[0] == _outcome(header + body)[1]
