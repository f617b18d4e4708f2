"""Engine errors are one family, and only that family is skipped quietly.

The exit codes are INTERFACE.md's: a netlist the engine cannot give numbers for
still checks (exit 0/1), a bug inside lintamp exits 2 with "internal error" on
stderr rather than becoming a silently missing finding (common practice for a
checker: a crash must be seen).
"""

from __future__ import annotations

from pathlib import Path

import pytest

from lintamp.cli import main
from lintamp.engine import engine_kinds
from lintamp.engine.devices_mos import UnsupportedModel
from lintamp.engine.engine_kinds import EngineError, SmallSignalError, UnknownNet
from lintamp.engine.mna import CircuitError
from lintamp.engine.op_table import OpTableError
from lintamp.engine.operating_point import CannotEvaluateError, OperatingPointError

SAMPLE = Path(__file__).resolve().parent.parent / "samples" / "touch_sensor_frontend.sp"
RULE = "high-z-current-input"  # the sample's one finding needs the small-signal solver


def test_every_engine_error_is_an_engine_error():
    for cls in (SmallSignalError, UnknownNet, UnsupportedModel, CircuitError, OpTableError,
                OperatingPointError, CannotEvaluateError):
        assert issubclass(cls, EngineError), cls


def test_the_open_limit_is_at_or_above():
    assert engine_kinds.is_open(engine_kinds.OPEN_OHM)
    assert not engine_kinds.is_open(engine_kinds.OPEN_OHM * (1 - 1e-12))


def _check(capsys):
    code = main(["check", "--no-config", "--no-cache", "--format", "json", "--only", RULE,
                 str(SAMPLE)])
    out = capsys.readouterr()
    return code, out.out, out.err


def test_the_sample_has_its_finding(capsys):
    code, out, err = _check(capsys)
    assert code == 1 and f'"rule": "{RULE}"' in out and err == ""


def test_engine_trouble_skips_the_node(monkeypatch, capsys):
    from lintamp.engine import small_signal

    def refuse(self, *args, **kwargs):
        raise SmallSignalError("cannot build the small-signal model: test")

    monkeypatch.setattr(small_signal.ImpedanceSolver, "z", refuse)
    code, out, err = _check(capsys)
    assert code == 0 and f'"rule": "{RULE}"' not in out and err == ""


@pytest.mark.parametrize("bug", [KeyError, IndexError])
def test_a_bug_in_the_engine_reaches_the_internal_error_exit(monkeypatch, capsys, bug):
    from lintamp.engine import small_signal

    def broken(self, *args, **kwargs):
        raise bug("a programming error")

    monkeypatch.setattr(small_signal.ImpedanceSolver, "z", broken)
    code, _out, err = _check(capsys)
    assert code == 2
    assert "internal error" in err and bug.__name__ in err and RULE in err
