"""The content-hash cache: hits only for identical bytes and settings; bad entries never trusted."""

from __future__ import annotations

import json

import pytest

from conftest import make_waiver
from lintamp.cache import CACHE_DIR, Cache, config_key
from lintamp.config import Config


@pytest.fixture
def netlist(tmp_path):
    top = tmp_path / "amp.sp"
    inc = tmp_path / "models.inc"
    top.write_text("* amp\n.include models.inc\nr1 a 0 1k\n.end\n")
    inc.write_text(".model nch nmos level=1\n")
    return [top, inc]


def test_round_trip_keeps_every_field(tmp_path, netlist, rich_finding):
    cache = Cache(tmp_path, "k1")
    assert cache.get(netlist) is None
    waiver = make_waiver("dangling-net", "tp", cell="amp", element="r1", element_nets=("a", "0"), inline=True)
    assert cache.put(netlist, [rich_finding], [waiver])
    entry = cache.get_entry(netlist)
    assert entry.findings[0].to_json() == rich_finding.to_json()
    assert entry.findings[0].fingerprint == rich_finding.fingerprint
    assert entry.pragmas == [waiver]
    assert (tmp_path / CACHE_DIR / ".gitignore").read_text().endswith("*\n")


def test_any_change_misses(tmp_path, netlist, rich_finding):
    cache = Cache(tmp_path, "k1")
    cache.put(netlist, [rich_finding])
    netlist[1].write_text(".model nch nmos level=1 vto=0.5\n")  # an included file changed
    assert cache.get(netlist) is None
    cache.put(netlist, [])
    assert cache.get(netlist) == []
    assert Cache(tmp_path, "k2").get(netlist) is None  # other settings
    assert Cache(tmp_path, "k1", tool_version="9.9").get(netlist) is None  # other version
    assert cache.get([netlist[0]]) is None  # other include set


def test_corrupt_entries_are_discarded_not_trusted(tmp_path, netlist, rich_finding):
    cache = Cache(tmp_path, "k1")
    cache.put(netlist, [rich_finding])
    entry = next((tmp_path / CACHE_DIR).glob("*/*.json"))
    for damage in (b"{truncated", b"\xff\xfe\x00", b'{"schema": 1, "key": "other"}',
                   json.dumps({"schema": 1, "key": entry.stem, "findings": [{"rule": 1}], "pragmas": []}).encode()):
        entry.write_bytes(damage)
        assert cache.get(netlist) is None
        assert not entry.exists()
        cache.put(netlist, [rich_finding])


def test_unwritable_cache_does_not_fail(tmp_path, netlist, rich_finding):
    (tmp_path / CACHE_DIR).write_text("not a folder")
    cache = Cache(tmp_path, "k1")
    assert cache.put(netlist, [rich_finding]) is False
    assert cache.get(netlist) is None


def test_unreadable_source_is_a_miss(tmp_path, netlist):
    cache = Cache(tmp_path, "k1")
    assert cache.put([tmp_path / "gone.sp"], []) is False
    assert cache.get([tmp_path / "gone.sp"]) is None


def test_config_key_follows_settings_and_rules(tmp_path):
    config = Config(root=tmp_path)
    assert config_key(config, ["a", "b"]) == config_key(config, ["b", "a"])
    assert config_key(config, ["a"]) != config_key(config, ["a", "b"])
    assert config_key(config, ["a"]) != config_key(Config(root=tmp_path, skip=("a",)), ["a"])
