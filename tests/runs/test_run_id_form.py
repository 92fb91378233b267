"""`record.is_run_id` without the uuid module: the same answer as the canonical-form test with uuid.UUID."""

from __future__ import annotations

import random
import uuid

from benchlog.runs.record import derived_run_id, is_run_id, new_run_id


def _by_uuid(value) -> bool:
    # reference: Python's uuid module, the canonical text form of RFC 4122 (lower-case, 8-4-4-4-12)
    try:
        return isinstance(value, str) and str(uuid.UUID(value)) == value
    except ValueError:
        return False


def test_same_answer_as_uuid_on_seeded_near_misses():
    rng = random.Random(14)
    good = [str(uuid.UUID(int=rng.getrandbits(128))) for _ in range(500)]
    candidates = list(good) + [g.upper() for g in good[:50]] + ["{" + g + "}" for g in good[:50]]
    candidates += [uuid.UUID(g).hex for g in good[:50]] + ["urn:uuid:" + good[0], good[0] + "\n", "", None, 7]
    for g in good:
        for _ in range(4):
            i = rng.randrange(len(g))
            candidates.append(g[:i] + rng.choice("0123456789abcdefABCDEFg- ") + g[i + 1:])
    assert all(is_run_id(c) == _by_uuid(c) for c in candidates)
    assert sum(map(is_run_id, candidates)) > 500  # both kinds of answer were asked


def test_new_and_derived_ids_are_run_ids_and_derived_ones_are_stable():
    assert is_run_id(new_run_id())
    # a version 5 UUID of the header line in our name space (RFC 4122 4.3): the same line, the same id
    line = '{"record":"header"}'
    assert derived_run_id(line) == derived_run_id(line) and is_run_id(derived_run_id(line))
    assert uuid.UUID(derived_run_id(line)).version == 5
