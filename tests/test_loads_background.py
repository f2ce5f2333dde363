"""A large loads file read by the child interpreter gives the same spec as reading it
here; a broken child, a bad file and a small file all end as reading it here does."""

from __future__ import annotations

import sys
from pathlib import Path

import pytest

from dxftruss import loads_background
from dxftruss.errors import ConfigError
from dxftruss.loadsfile import read_loads_file


def _big_loads(path: Path, n: int = 9000) -> Path:
    lines = ['[units]\nforce = "kN"\nlength = "m"\n']
    lines += ['[[support]]\nat = [0.0, 0.0]\nfix = "xy"\n']
    for k in range(n):
        lines.append(f'[[load]]\ncase = "deck"\nat = [{k * 0.5}, 0.0]\nfy = -{1 + k % 7}.5\n')
    path.write_text("".join(lines), encoding="utf-8")
    assert path.stat().st_size >= loads_background.MIN_BYTES
    return path


def test_child_gives_the_same_spec(tmp_path: Path) -> None:
    path = _big_loads(tmp_path / "big.toml")
    pending = loads_background.start(path)
    assert pending.child is not None  # the child was started, not the in-process read
    spec = pending.result()
    assert spec == read_loads_file(path)
    assert len(spec.loads) == 9000 and spec.loads[3].fy == -4.5


def test_a_child_that_cannot_start_falls_back(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    path = _big_loads(tmp_path / "big.toml", 6000)
    monkeypatch.setattr(sys, "executable", str(tmp_path / "no-such-python"))
    assert loads_background.start(path).result() == read_loads_file(path)


def test_a_child_that_fails_falls_back(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    path = _big_loads(tmp_path / "big.toml", 6000)
    monkeypatch.setattr(loads_background, "_CHILD", "import sys; sys.exit(1)")
    assert loads_background.start(path).result() == read_loads_file(path)


def test_a_bad_large_file_gives_this_process_error(tmp_path: Path) -> None:
    path = _big_loads(tmp_path / "big.toml", 6000)
    path.write_text(path.read_text(encoding="utf-8") + '[[load]]\ncase = "deck"\nat = [1.0, 0.0]\nfq = 3.0\n')
    with pytest.raises(ConfigError) as here:
        read_loads_file(path)
    with pytest.raises(ConfigError) as there:
        loads_background.start(path).result()
    assert str(there.value) == str(here.value) and "fq" in str(here.value)


def test_a_small_file_is_read_at_once(tmp_path: Path) -> None:
    path = tmp_path / "small.toml"
    path.write_text('[[load]]\ncase = "a"\nat = [0.0, 0.0]\nfy = -1.0\n', encoding="utf-8")
    pending = loads_background.start(path)
    assert pending.child is None and pending.spec is not None and pending.spec.loads[0].fy == -1.0
    bad = tmp_path / "bad.toml"
    bad.write_text("[[load]\n", encoding="utf-8")
    with pytest.raises(ConfigError):
        loads_background.start(bad)  # raised before any drawing is read, as before


def test_a_child_started_early_is_the_one_taken(tmp_path: Path) -> None:
    path = _big_loads(tmp_path / "big.toml", 6000)
    loads_background.start_early(path)
    early = loads_background._early[str(path)]
    assert early.child is not None
    pending = loads_background.start(path)
    assert pending is early and not loads_background._early  # taken, not a second child
    assert pending.result() == read_loads_file(path)


def test_a_child_started_early_and_never_taken_is_stopped(tmp_path: Path) -> None:
    path = _big_loads(tmp_path / "big.toml", 6000)
    loads_background.start_early(path)
    child = loads_background._early[str(path)].child
    loads_background.forget_early()
    assert not loads_background._early and child is not None and child.poll() is not None


def test_a_small_file_is_not_started_early(tmp_path: Path) -> None:
    path = tmp_path / "small.toml"
    path.write_text('[[load]]\ncase = "a"\nat = [0.0, 0.0]\nfy = -1.0\n', encoding="utf-8")
    loads_background.start_early(path)
    assert not loads_background._early  # read by start() at once, its error before the drawing's
