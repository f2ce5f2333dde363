"""Output safety: what a report may replace, how its name is chosen, and how a run ends.

Glossary:
    special target  an output path that is not a regular file: a device, a FIFO, a socket,
                    a directory, a symbolic link to nothing.
    leftovers       temporaries (``*.tmp``) or hidden files left in a folder after a run.
    big drawing     rows of Pratt trusses from bench/make_trusses.py, large enough that a
                    run is still working when the test signals it.
"""

from __future__ import annotations

import contextlib
import importlib.util
import json
import os
import shutil
import signal
import stat
import subprocess
import sys
import time
from pathlib import Path

import pytest

from dxftruss import outputs
from dxftruss.cli import main

from .drawings import pratt_segments, write_drawing
from .fuzz import mutators as mu

ROOT = Path(__file__).resolve().parents[1]


def drawing(folder: Path, name: str = "roof.dxf") -> Path:
    folder.mkdir(parents=True, exist_ok=True)
    return write_drawing(folder / name, pratt_segments(), supports=[(0, 0, "XY"), (24, 0, "Y")])


def run(args, cwd=None, env=None, **kw):  # type: ignore[no-untyped-def]
    p = subprocess.run(
        [sys.executable, "-m", "dxftruss", *map(str, args)],
        capture_output=True,
        text=True,
        cwd=cwd,
        timeout=120,
        env=env,
        check=False,
        **kw,
    )
    return p.returncode, p.stdout, p.stderr


def one_line(err: str) -> bool:
    return len(err.strip().splitlines()) == 1 and "Traceback" not in err


def leftovers(folder: Path) -> list[str]:
    return sorted(str(f.relative_to(folder)) for f in folder.rglob("*") if f.name.endswith(".tmp"))


# ---------------------------------------------------------------------------------------
# 1. never replace what is not ours


def _special(kind: str, d: Path) -> Path:
    return mu.make_output_target(kind, d, f"target-{kind}")


@pytest.mark.parametrize("option", ["--json", "--pdf", "--dxf"])
@pytest.mark.parametrize("kind", ["fifo", "socket", "dir", "dangling-link", "link-to-fifo"])
def test_special_output_target_is_refused_and_kept(tmp_path, capsys, option, kind):
    dxf = drawing(tmp_path / "in")
    target = _special(kind, tmp_path)
    before = os.lstat(target)
    assert main(["check", str(dxf), option, str(target), "--quiet"]) == 2
    err = capsys.readouterr().err
    assert one_line(err) and str(target) in err, err
    after = os.lstat(target)
    assert (after.st_ino, stat.S_IFMT(after.st_mode)) == (before.st_ino, stat.S_IFMT(before.st_mode))
    assert leftovers(tmp_path) == []


def test_device_output_is_refused_before_any_write(tmp_path, monkeypatch, capsys):
    # /dev/null itself: any temporary or rename is recorded instead of done, so a broken
    # program cannot replace the device while this test runs as root
    dxf = drawing(tmp_path)
    calls = []
    monkeypatch.setattr(os, "replace", lambda *a: calls.append(("replace", a)))

    def failing_mkstemp(*a, **k):
        calls.append(("mkstemp", k))
        raise OSError("no")

    monkeypatch.setattr(outputs.tempfile, "mkstemp", failing_mkstemp)
    assert main(["check", str(dxf), "--json", "/dev/null", "--quiet"]) == 2
    err = capsys.readouterr().err
    assert one_line(err) and "/dev/null" in err and "device" in err, err
    assert calls == []


def test_symlink_output_writes_its_target_and_stays_a_link(tmp_path):
    dxf = drawing(tmp_path)
    real = tmp_path / "reports" / "roof.json"
    real.parent.mkdir()
    real.write_text("old")
    link = tmp_path / "latest.json"
    link.symlink_to(real)
    code, _out, err = run(["check", dxf, "--json", link, "--quiet"])
    assert code == 0, err
    assert link.is_symlink() and os.readlink(link) == str(real)  # the link is untouched...
    assert json.loads(real.read_text())["schema"].startswith("dxftruss-report")  # ...its target is new
    assert leftovers(tmp_path) == []


def test_output_mode_follows_the_umask(tmp_path):
    dxf = drawing(tmp_path)
    for mask, mode in ((0o022, 0o644), (0o002, 0o664), (0o077, 0o600)):
        out = tmp_path / f"r{mask:o}.json"
        p = subprocess.run(
            [
                sys.executable,
                "-c",
                (
                    f"import os, sys; os.umask({mask}); from dxftruss.cli import main; "
                    f"sys.exit(main(['check', {str(dxf)!r}, '--json', {str(out)!r}, '--quiet']))"
                ),
            ],
            capture_output=True,
            text=True,
            timeout=120,
            check=False,
        )
        assert p.returncode == 0, p.stderr
        assert stat.S_IMODE(out.stat().st_mode) == mode, (oct(mask), oct(out.stat().st_mode))


@pytest.mark.parametrize("spelling", ["same", "dotdot", "symlink"])
def test_two_options_naming_one_file_are_refused_before_any_work(tmp_path, capsys, spelling):
    dxf = drawing(tmp_path)
    a = tmp_path / "r.out"
    a.write_text("keep me")
    (tmp_path / "sub").mkdir()
    b = {"same": a, "dotdot": tmp_path / "sub" / ".." / "r.out", "symlink": tmp_path / "l.out"}[spelling]
    if spelling == "symlink":
        b.symlink_to(a)
    assert main(["check", str(dxf), "--json", str(a), "--pdf", str(b), "--quiet"]) == 2
    err = capsys.readouterr().err
    assert one_line(err) and "twice" in err, err
    assert a.read_text() == "keep me"


# ---------------------------------------------------------------------------------------
# 3. no tracebacks, and the exit status tells the truth


def test_file_name_too_long_is_one_line(tmp_path):
    dxf = drawing(tmp_path)
    long = "a" * 300
    code, _out, err = run(["check", tmp_path / f"{long}.dxf", "--json", tmp_path / "o.json"])
    assert code == 2 and one_line(err) and "too long" in err, err
    code, _out, err = run(["check", dxf, "--json", tmp_path / f"{long}.json"])
    assert code == 2 and one_line(err) and "too long" in err, err


def test_batch_output_folder_that_is_a_file_is_one_line(tmp_path):
    a, b = drawing(tmp_path, "a.dxf"), drawing(tmp_path, "b.dxf")
    (tmp_path / "out").write_text("a file")
    code, _out, err = run(["check", a, b, "--json", tmp_path / "out"])
    assert code == 2 and one_line(err) and "out" in err and "--json" in err, err
    assert (tmp_path / "out").read_text() == "a file"


@pytest.fixture
def open_dir():  # type: ignore[no-untyped-def]
    """A folder another user can reach (pytest's own is private to its user)."""
    import tempfile

    d = Path(tempfile.mkdtemp(prefix="dxftruss-nobody-"))
    d.chmod(0o777)
    yield d
    for p in [d, *d.rglob("*")]:
        with contextlib.suppress(OSError):
            p.chmod(0o777)
    shutil.rmtree(d, ignore_errors=True)


def _as_nobody() -> list[str] | None:
    if os.geteuid() != 0:
        return []
    setpriv = shutil.which("setpriv")
    if setpriv is None:
        return None
    return [setpriv, "--reuid=65534", "--regid=65534", "--clear-groups"]


@pytest.mark.parametrize("what", ["folder", "file"])
def test_unreadable_folder_or_file_is_one_line(open_dir, what):
    tmp_path = open_dir
    prefix = _as_nobody()
    if prefix is None:
        pytest.skip("running as root without setpriv: cannot be a user who is refused")
    (tmp_path / "home").mkdir(mode=0o777)
    drawing(tmp_path / "jobs")
    secret = tmp_path / "jobs" if what == "folder" else tmp_path / "jobs" / "roof.dxf"
    (tmp_path / "jobs").chmod(0o755)
    secret.chmod(0o000)
    env = {**os.environ, "HOME": str(tmp_path / "home"), "XDG_CONFIG_HOME": str(tmp_path / "home")}
    env["PYTHONPATH"] = str(ROOT)
    p = _run_as(prefix, secret, tmp_path, env)
    secret.chmod(0o755)
    assert p.returncode == 2 and one_line(p.stderr), p.stderr
    assert str(secret) in p.stderr and "Permission denied" in p.stderr, p.stderr


def _run_as(prefix: list[str], drawing: Path, folder: Path, env: dict[str, str]) -> subprocess.CompletedProcess[str]:
    """``dxftruss check DRAWING --json folder/o.json`` as the user ``prefix`` switches to."""
    return subprocess.run(
        [*prefix, sys.executable, "-m", "dxftruss", "check", str(drawing), "--json", str(folder / "o.json")],
        capture_output=True,
        text=True,
        timeout=120,
        env=env,
        cwd=folder,
        check=False,
    )


def test_unreadable_home_folder_is_one_line(open_dir):
    tmp_path = open_dir
    prefix = _as_nobody()
    if prefix is None:
        pytest.skip("running as root without setpriv")
    dxf = drawing(tmp_path)
    home = tmp_path / "home"
    home.mkdir(mode=0o000)
    env = {**os.environ, "HOME": str(home), "PYTHONPATH": str(ROOT)}
    env.pop("XDG_CONFIG_HOME", None)
    p = _run_as(prefix, dxf, tmp_path, env)
    home.chmod(0o755)
    assert p.returncode == 2 and one_line(p.stderr) and str(home) in p.stderr, p.stderr
    assert "internal error" not in p.stderr and "XDG_CONFIG_HOME" in p.stderr, p.stderr  # what to do


@pytest.mark.parametrize("content", [b"\xff\xfe[core]\n", b"[core\nnot an ini file\n", b"[core]\n[core]\n"])
def test_broken_library_settings_file_is_one_line(tmp_path, content):
    dxf = drawing(tmp_path)
    ini = tmp_path / "settings.ini"
    ini.write_bytes(content)
    env = {**os.environ, "EZDXF_CONFIG_FILE": str(ini)}
    code, out, err = run(["check", dxf, "--json", tmp_path / "o.json"], env=env)
    assert code == 2 and one_line(err) and str(ini) in err and out == "", (code, out, err)
    assert "internal error" not in err and "settings file" in err, err  # the user's file, not a bug
    # the same file in the working folder, where the library also looks
    (tmp_path / "ezdxf.ini").write_bytes(content)
    env.pop("EZDXF_CONFIG_FILE")
    code, out, err = run(["check", dxf, "--json", tmp_path / "o.json"], env=env, cwd=tmp_path)
    assert code == 2 and one_line(err) and "ezdxf.ini" in err, err


@pytest.mark.parametrize("json_to_stdout", [True, False])
def test_closed_standard_output_is_one_line_without_traceback(tmp_path, json_to_stdout):
    dxf = drawing(tmp_path)
    r, w = os.pipe()
    os.close(r)  # the reader is gone before anything is written: every write is EPIPE
    args = [sys.executable, "-m", "dxftruss", "check", str(dxf)]
    args += ["--json", "-"] if json_to_stdout else ["--json", str(tmp_path / "o.json")]
    p = subprocess.run(args, stdout=w, stderr=subprocess.PIPE, text=True, timeout=120, check=False)
    os.close(w)
    assert p.returncode == 2, p.stderr
    assert one_line(p.stderr) and "Exception ignored" not in p.stderr, p.stderr


def test_messages_escape_control_characters(tmp_path):
    name = tmp_path / "roof\x1b[2J\u202e.dxf"  # a missing drawing whose name clears the screen
    code, _out, err = run(["check", name, "--json", tmp_path / "o.json"])
    assert code == 2 and one_line(err)
    assert "\x1b" not in err and "\u202e" not in err and "\\x1b[2J" in err, repr(err)


def test_wrote_line_and_batch_table_escape_control_characters(tmp_path):
    drawing(tmp_path / "in", "a\x1b[31m.dxf")
    drawing(tmp_path / "in", "b.dxf")
    code, out, err = run(["check", "in", "--json", "out"], cwd=tmp_path)
    assert code == 0, err
    # the summary's own header belongs to the text report; here: the "wrote" line and the table
    mine = [ln for ln in out.splitlines() if ln.startswith(("wrote ", "\u2502"))]
    assert any(ln == "wrote out/a\\x1b[31m.check.json" for ln in mine), out
    assert any("in/a\\x1b[31m.dxf" in ln for ln in mine), out
    assert not any("\x1b" in ln for ln in mine), mine


# ---------------------------------------------------------------------------------------
# 6. a drawing's reports change together; interrupts end cleanly


def test_a_failing_report_leaves_the_other_reports_of_the_drawing_old(tmp_path, monkeypatch, capsys):
    dxf = drawing(tmp_path)
    js, pdf = tmp_path / "r.json", tmp_path / "r.pdf"
    js.write_text("old json")
    pdf.write_bytes(b"old pdf")
    import dxftruss.report.pdf as rp

    def broken(result, path, **k):  # type: ignore[no-untyped-def]
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(rp, "write_pdf", broken)
    assert main(["check", str(dxf), "--json", str(js), "--pdf", str(pdf), "--quiet"]) == 2
    assert one_line(capsys.readouterr().err)
    assert js.read_text() == "old json" and pdf.read_bytes() == b"old pdf"  # never new JSON beside old PDF
    assert leftovers(tmp_path) == []


def test_a_failing_rename_rolls_back_the_earlier_ones(tmp_path, monkeypatch, capsys):
    dxf = drawing(tmp_path)
    js, out_dxf = tmp_path / "r.json", tmp_path / "r.out.dxf"
    js.write_text("old json")
    real = os.replace

    def replace(src, dst):  # type: ignore[no-untyped-def]
        if str(dst) == str(out_dxf):
            raise OSError(5, "Input/output error")
        return real(src, dst)

    monkeypatch.setattr(outputs.os, "replace", replace)
    assert main(["check", str(dxf), "--json", str(js), "--dxf", str(out_dxf), "--quiet"]) == 2
    err = capsys.readouterr().err
    assert one_line(err) and str(out_dxf) in err, err
    assert js.read_text() == "old json" and not out_dxf.exists()
    assert list(leftovers(tmp_path)) == []
    assert sorted(p.name for p in tmp_path.iterdir() if p.name.startswith(".")) == []


def _big(folder: Path, name: str, parts: int) -> Path:
    spec = importlib.util.spec_from_file_location("make_trusses", ROOT / "bench" / "make_trusses.py")
    mod = importlib.util.module_from_spec(spec)
    sys.modules.setdefault("make_trusses", mod)
    spec.loader.exec_module(mod)
    folder.mkdir(parents=True, exist_ok=True)
    mod.write_drawing(folder / name, "lines", parts, 50)  # 201 members a part
    return folder / name


def _signal_mid_run(args, sig, cwd, settle: float):  # type: ignore[no-untyped-def]
    p = subprocess.Popen(
        [sys.executable, "-m", "dxftruss", *map(str, args)],
        cwd=cwd,
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
    )
    time.sleep(settle)
    assert p.poll() is None, "the run ended before the signal: make the drawing bigger"
    p.send_signal(sig)
    out, err = p.communicate(timeout=30)  # stopping promptly: not a minute of finishing work
    return p.returncode, out, err


@pytest.mark.parametrize("sig, code", [(signal.SIGINT, 130), (signal.SIGTERM, 143)])
def test_signal_during_a_single_run(tmp_path, sig, code):
    dxf = _big(tmp_path, "big.dxf", 100)  # 20k members
    out_dir = tmp_path / "out"
    out_dir.mkdir()
    (out_dir / "big.json").write_text("old")
    got, _out, err = _signal_mid_run(
        ["check", dxf, "--json", out_dir / "big.json", "--pdf", out_dir / "big.pdf", "--quiet"], sig, tmp_path, 2.0
    )
    assert got == code and one_line(err), err
    assert (out_dir / "big.json").read_text() == "old" and not (out_dir / "big.pdf").exists()
    assert leftovers(out_dir) == []


@pytest.mark.parametrize("sig, code", [(signal.SIGINT, 130), (signal.SIGTERM, 143)])
def test_signal_during_a_batch_stops_the_workers(tmp_path, sig, code):
    for i in range(3):
        _big(tmp_path / "jobs", f"big{i}.dxf", 100)
    out_dir = tmp_path / "out"
    got, _out, err = _signal_mid_run(
        ["check", tmp_path / "jobs", "--json", out_dir, "--pdf", out_dir, "--quiet"], sig, tmp_path, 4.0
    )
    assert got == code and one_line(err), err
    assert leftovers(out_dir) == []
    for stem in ("big0", "big1", "big2"):  # each drawing: both reports or neither
        have = {(out_dir / f"{stem}.check.{e}").exists() for e in ("json", "pdf")}
        assert len(have) == 1, stem
    time.sleep(0.5)
    ps = subprocess.run(["ps", "-eo", "args"], capture_output=True, text=True, check=False).stdout
    assert str(tmp_path / "jobs") not in ps  # no worker left running


# ---------------------------------------------------------------------------------------
# 7. batch names


def test_same_name_in_two_folders_keeps_both_reports(tmp_path):
    a, b = drawing(tmp_path / "a"), drawing(tmp_path / "b")
    write_drawing(b, [s for s in pratt_segments() if s != (4.0, 3.0, 8.0, 0.0)], supports=[(0, 0, "XY"), (24, 0, "Y")])
    out = tmp_path / "out"
    code, stdout, err = run(["check", a, b, "--json", out])
    assert code == 1, err  # b has a mechanism
    ra = json.loads((out / "a" / "roof.check.json").read_text())
    rb = json.loads((out / "b" / "roof.check.json").read_text())
    assert ra["source"]["path"] == str(a) and rb["source"]["path"] == str(b)
    assert str(out / "a" / "roof.check.json") in stdout and str(out / "b" / "roof.check.json") in stdout


def test_folder_with_one_drawing_writes_into_the_output_folder(tmp_path):
    drawing(tmp_path / "jobs")
    out = tmp_path / "out"
    code, _stdout, err = run(["check", tmp_path / "jobs", "--json", out])
    assert code == 0, err
    assert out.is_dir() and json.loads((out / "roof.check.json").read_text())["schema"].startswith("dxftruss")


def test_chunked_text_write_gives_the_bytes_of_write_text(tmp_path):
    # reference: pathlib's own Path.write_text with the same encoding and error handler
    from dxftruss.outputs import write_text_chunked

    text = ('{"name":"Läufer ✓","x":1.5}\n' * 50) + "lone \udcff surrogate\n"
    want, got = tmp_path / "want.json", tmp_path / "got.json"
    want.write_text(text, encoding="utf-8", errors="backslashreplace")
    for chunk in (1, 7, 64, 1 << 20):
        write_text_chunked(got, text, chunk)
        assert got.read_bytes() == want.read_bytes()
        write_text_chunked(got, [text[:100], "", text[100:333], text[333:]], chunk)  # a list of strings
        assert got.read_bytes() == want.read_bytes()
