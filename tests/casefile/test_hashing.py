from datetime import datetime, timedelta, timezone

import pytest

from workbench.casefile.hashing import canonical_json, normalise_time, record_hash, sha256_hex
from workbench.errors import ValueRangeError


def test_sha256_fips_examples():
    # FIPS 180-4 / NIST example values, from memory
    assert sha256_hex(b"abc") == "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
    # FIPS 180-4 / NIST example values (empty message), from memory
    assert sha256_hex(b"") == "e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855"


def test_canonical_json_sorted_compact_utf8():
    # expected text follows the sorted-key compact rule (common practice, no source)
    assert canonical_json({"b": 1, "a": [1, "é"]}) == '{"a":[1,"é"],"b":1}'.encode()


def test_canonical_json_refuses_nan():
    with pytest.raises(ValueRangeError):
        canonical_json({"x": float("nan")})


def test_record_hash_covers_only_named_fields():
    a = record_hash({"x": 1, "y": 2}, ("x",))
    b = record_hash({"x": 1, "y": 3}, ("x",))
    # hash of canonical '{"x":1}' computed the same way (common practice, no source)
    assert a == b == sha256_hex(b'{"x":1}')


def test_normalise_time_to_utc_z():
    # 11:15 at +01:00 is 10:15 UTC (definition of UTC offsets, common practice)
    assert normalise_time("2026-03-04T11:15:00+01:00") == "2026-03-04T10:15:00.000000Z"
    tz = timezone(timedelta(hours=-5))
    # 05:00 at -05:00 is 10:00 UTC (common practice, no source)
    assert normalise_time(datetime(2026, 3, 4, 5, 0, tzinfo=tz)) == "2026-03-04T10:00:00.000000Z"


@pytest.mark.parametrize("bad", ["2026-03-04T10:15:00", "yesterday", "2026-13-01T00:00:00Z"])
def test_normalise_time_refuses(bad):
    with pytest.raises(ValueRangeError):
        normalise_time(bad)
