"""Result sets on disk: whole sets, the manifest, the lock, owned files, modes, signals, kills."""

from __future__ import annotations

import contextlib
import errno
import hashlib
import json
import os
import random
import select
import signal
import stat
import subprocess
import sys
import threading
import time
from pathlib import Path

import pytest

from pipeopt import outputs
from pipeopt.errors import IncompleteResultSet, OutputError
from pipeopt.outputs import (
    MANIFEST,
    check_inputs,
    check_out,
    printable,
    read_manifest,
    write_atomic,
    write_result_set,
)

DATA = Path(__file__).parent / "data"
SET_A = {"report.md": "# A\n", "tornado.csv": "x\n1\n", "figures/a.png": b"\x89PNG a"}
SET_B = {"report.md": "# B\n", "candidates.csv": "y\n2\n", "figures/b.png": b"\x89PNG b"}
EXCHANGE = outputs._renameat2 is not None  # Linux: the folder is swapped in one step


def _bytes(v) -> bytes:
    return v.encode() if isinstance(v, str) else v


def _listing(folder: Path) -> set[str]:
    return {p.relative_to(folder).as_posix() for p in folder.rglob("*")}


@pytest.fixture
def in_place(monkeypatch):
    """The fallback where the folder cannot be exchanged: files are moved in one by one."""
    monkeypatch.setattr(outputs, "_renameat2", None)


# ------------------------------------------------------------------------------------------
# the manifest
# ------------------------------------------------------------------------------------------
def test_a_new_folder_gets_the_set_and_its_manifest(tmp_path):
    out = tmp_path / "nested" / "res"
    paths = write_result_set(out, SET_A)
    assert [p.relative_to(out).as_posix() for p in paths] == [*SET_A, MANIFEST]
    doc = json.loads((out / MANIFEST).read_text())
    assert doc["complete"] is True and doc["pipeopt_version"]
    # sizes and SHA-256 recomputed here with hashlib (independent of the writer)
    assert doc["files"] == [{"name": n, "size": len(_bytes(v)),
                             "sha256": hashlib.sha256(_bytes(v)).hexdigest()}
                            for n, v in SET_A.items()]
    assert read_manifest(out).names == list(SET_A)
    assert (out / "figures" / "a.png").read_bytes() == SET_A["figures/a.png"]
    assert _listing(tmp_path / "nested") == {"res", *(f"res/{n}" for n in _listing(out))}


def test_reader_refuses_an_incomplete_or_altered_set(tmp_path):
    write_result_set(tmp_path, SET_A)
    (tmp_path / "tornado.csv").write_text("x\n2\n")          # same size, other content
    with pytest.raises(IncompleteResultSet, match="'tornado.csv' differs"):
        read_manifest(tmp_path)
    assert read_manifest(tmp_path, verify=False).names == list(SET_A)
    (tmp_path / "tornado.csv").unlink()
    with pytest.raises(IncompleteResultSet, match="'tornado.csv' of the result set is missing"):
        read_manifest(tmp_path)
    doc = json.loads((tmp_path / MANIFEST).read_text())
    doc["complete"] = False
    (tmp_path / MANIFEST).write_text(json.dumps(doc))
    with pytest.raises(IncompleteResultSet, match="incomplete"):
        read_manifest(tmp_path)
    (tmp_path / MANIFEST).write_text("{ not json")
    with pytest.raises(IncompleteResultSet, match="not a valid pipeopt manifest"):
        read_manifest(tmp_path)
    (tmp_path / MANIFEST).unlink()
    with pytest.raises(IncompleteResultSet, match="no manifest.json"):
        read_manifest(tmp_path)
    with pytest.raises(IncompleteResultSet, match="no such folder"):
        read_manifest(tmp_path / "absent")


def test_a_manifest_naming_files_outside_the_folder_is_refused_and_never_obeyed(tmp_path):
    out = tmp_path / "res"
    victim = tmp_path / "victim.txt"
    victim.write_text("mine")
    write_result_set(out, SET_A)
    doc = json.loads((out / MANIFEST).read_text())
    doc["files"].append({"name": "../victim.txt", "size": 4,
                         "sha256": hashlib.sha256(b"mine").hexdigest()})
    (out / MANIFEST).write_text(json.dumps(doc))
    with pytest.raises(IncompleteResultSet, match="not a valid"):
        read_manifest(out)
    write_result_set(out, SET_B)                  # --force: replaces only names inside
    assert victim.read_text() == "mine"


@pytest.mark.parametrize("name", ["../x.csv", "/abs.csv", "a/../b.csv", ".hidden", MANIFEST,
                                  "", "a//b.csv", "a\\b.csv"])
def test_set_names_stay_inside_the_folder(tmp_path, name):
    with pytest.raises(ValueError, match="not a valid file name"):
        write_result_set(tmp_path, {name: "x"})
    assert not list(tmp_path.iterdir())


# ------------------------------------------------------------------------------------------
# --force: the set it owns, never the files of others
# ------------------------------------------------------------------------------------------
def _with_foreign_files(out: Path) -> dict:
    (out / "keep.txt").write_text("the user's notes")
    (out / "empty-folder").mkdir()
    (out / "figures" / "mine.png").write_bytes(b"the user's figure")
    (out / "link-to-notes").symlink_to("keep.txt")
    return {"keep.txt": (out / "keep.txt").stat().st_ino}


@pytest.mark.parametrize("mode", ["exchange", "in place"])
def test_force_replaces_the_owned_set_and_keeps_other_files(tmp_path, monkeypatch, mode):
    if mode == "in place":
        monkeypatch.setattr(outputs, "_renameat2", None)
    elif not EXCHANGE:
        pytest.skip("no renameat2 on this system")
    out = tmp_path / "res"
    write_result_set(out, SET_A)
    inode = _with_foreign_files(out)
    write_result_set(out, SET_B)
    assert read_manifest(out).names == list(SET_B)
    assert _listing(out) == {"report.md", "candidates.csv", "figures", "figures/b.png",
                             "figures/mine.png", "keep.txt", "empty-folder", "link-to-notes",
                             MANIFEST}             # tornado.csv and figures/a.png are gone
    assert (out / "report.md").read_text() == "# B\n"
    assert (out / "keep.txt").read_text() == "the user's notes"
    assert (out / "keep.txt").stat().st_ino == inode["keep.txt"]   # the same file, not a copy
    assert (out / "figures" / "mine.png").read_bytes() == b"the user's figure"
    assert os.readlink(out / "link-to-notes") == "keep.txt"
    assert not [p for p in tmp_path.iterdir() if p.name != "res"]   # no temporaries beside


def test_without_force_a_folder_filled_meanwhile_is_refused(tmp_path):
    write_result_set(tmp_path, SET_A)
    with pytest.raises(OutputError, match="not empty .*another run.*--force"):
        write_result_set(tmp_path, SET_B, force=False)
    assert read_manifest(tmp_path).names == list(SET_A)


def test_an_interrupted_in_place_set_is_refused_then_replaced(tmp_path, in_place, monkeypatch):
    out = tmp_path / "res"
    write_result_set(out, SET_A)
    real = os.replace
    calls = []

    def fail_on_third(a, b, *args, **kw):
        calls.append(b)
        if len(calls) == 3:
            raise OSError(errno.EIO, "Input/output error", str(b))
        return real(a, b, *args, **kw)

    monkeypatch.setattr(outputs.os, "replace", fail_on_third)
    with pytest.raises(OutputError, match="Input/output error"):
        write_result_set(out, SET_B)
    monkeypatch.setattr(outputs.os, "replace", real)
    with pytest.raises(IncompleteResultSet, match="incomplete"):
        read_manifest(out)
    write_result_set(out, SET_B)
    assert read_manifest(out).names == list(SET_B)
    assert "tornado.csv" not in _listing(out)          # owned by the interrupted set's record


def test_something_in_the_way_is_named(tmp_path):
    (tmp_path / "figures").write_text("a file where the set has a folder")
    with pytest.raises(OutputError, match="'figures' is in the way"):
        write_result_set(tmp_path, SET_A)
    assert (tmp_path / "figures").read_text().startswith("a file")


# ------------------------------------------------------------------------------------------
# temporaries, lock, parallel runs
# ------------------------------------------------------------------------------------------
def test_stale_temporaries_of_killed_runs_are_removed(tmp_path):
    out = tmp_path / "res"
    write_result_set(out, SET_A)
    stale = [tmp_path / ".res.pipeopt-new-123-abcd", out / ".pipeopt-new-9-ffff",
             out / ".report.md.k2j3h4g5.tmp", out / "figures" / ".a.png.abcd1234.tmp"]
    stale[0].mkdir()
    (stale[0] / "report.md").write_text("half")
    stale[1].mkdir()
    for p in stale[2:]:
        p.write_text("half")
    theirs = [out / ".keep.txt.abcd1234.tmp", tmp_path / ".other.pipeopt-new-1-2"]
    for p in theirs:
        p.write_text("not ours")
    write_result_set(out, SET_A)
    assert not [p for p in stale if os.path.lexists(p)]
    assert all(p.read_text() == "not ours" for p in theirs)


_HOLDER = r"""
import fcntl, os, sys, time
fd = os.open(sys.argv[1], os.O_RDWR | os.O_CREAT, 0o666)
fcntl.flock(fd, fcntl.LOCK_EX)
os.write(fd, f"{os.getpid()}\n".encode())
print("locked", flush=True)
time.sleep(float(sys.argv[2]))
"""


@contextlib.contextmanager
def _lock_held(lock: Path, seconds: float):
    """Another process holding the lock of a folder for ``seconds`` (or until we kill it)."""
    holder = subprocess.Popen([sys.executable, "-c", _HOLDER, str(lock), str(seconds)],
                              stdout=subprocess.PIPE, text=True)
    try:
        assert holder.stdout.readline().strip() == "locked"   # EOF if it died: no hang
        yield holder
    finally:
        if seconds > 5:
            holder.kill()
        holder.wait(timeout=60)


@pytest.mark.skipif(outputs.fcntl is None, reason="no fcntl on this system")
def test_a_second_writer_waits_then_refuses_naming_the_holder(tmp_path):
    out = tmp_path / "res"
    write_result_set(out, SET_A)
    with _lock_held(tmp_path / ".res.pipeopt-lock", 30) as holder:
        t0 = time.monotonic()
        with pytest.raises(OutputError, match=rf"another pipeopt run \(process {holder.pid}\) "
                                              r"is writing .*waited 0.5 s"):
            write_result_set(out, SET_B, lock_timeout=0.5)
        assert 0.45 < time.monotonic() - t0 < 10
    assert read_manifest(out).names == list(SET_A)


@pytest.mark.skipif(outputs.fcntl is None, reason="no fcntl on this system")
def test_a_second_writer_waits_for_the_first(tmp_path):
    out = tmp_path / "res"
    lock = tmp_path / ".res.pipeopt-lock"
    with _lock_held(lock, 0.6):
        t0 = time.monotonic()
        write_result_set(out, SET_B, lock_timeout=30)
        assert time.monotonic() - t0 > 0.3
    assert read_manifest(out).names == list(SET_B)
    assert not lock.exists()                              # the lock file is removed after use


def test_parallel_writers_and_a_reader_never_see_a_mixture(tmp_path):
    out = tmp_path / "res"
    write_result_set(out, SET_A)
    sets = {tuple(SET_A): SET_A, tuple(SET_B): SET_B}
    seen, errors = [], []
    stop = threading.Event()

    def writer(files):
        try:
            for _ in range(15):
                write_result_set(out, files, lock_timeout=60)
        except Exception as exc:  # noqa: BLE001 - reported below
            errors.append(exc)

    def reader():
        while not stop.is_set():
            try:
                seen.append(tuple(read_manifest(out).names))
            except Exception as exc:  # noqa: BLE001 - reported below
                errors.append(exc)

    threads = [threading.Thread(target=writer, args=(s,)) for s in (SET_A, SET_B)]
    r = threading.Thread(target=reader)
    r.start()
    for t in threads:
        t.start()
    for t in threads:
        t.join(timeout=120)
    stop.set()
    r.join(timeout=30)
    if not EXCHANGE:
        errors = [e for e in errors if not isinstance(e, IncompleteResultSet)]
    assert not errors, errors[:3]
    assert seen and set(seen) <= set(sets)
    final = read_manifest(out)
    assert _listing(out) - {MANIFEST, "figures"} == set(sets[tuple(final.names)])


# ------------------------------------------------------------------------------------------
# modes
# ------------------------------------------------------------------------------------------
@pytest.fixture
def umask():
    old = os.umask(0o022)
    yield os.umask
    os.umask(old)


def _mode(p: Path) -> int:
    return stat.S_IMODE(os.lstat(p).st_mode)


@pytest.mark.parametrize(("mask", "file_mode", "dir_mode"),
                         [(0o022, 0o644, 0o755), (0o002, 0o664, 0o775), (0o077, 0o600, 0o700)])
def test_modes_follow_the_umask(tmp_path, umask, mask, file_mode, dir_mode):
    umask(mask)
    out = tmp_path / "res"
    write_result_set(out, SET_A)
    write_atomic(tmp_path / "single.toml", "x = 1\n")
    assert _mode(out) == dir_mode and _mode(out / "figures") == dir_mode
    assert {_mode(out / n) for n in [*SET_A, MANIFEST]} == {file_mode}
    assert _mode(tmp_path / "single.toml") == file_mode


def test_force_keeps_the_mode_of_an_existing_file(tmp_path, umask):
    out = tmp_path / "res"
    write_result_set(out, SET_A)
    os.chmod(out / "report.md", 0o664)           # shared with a group
    os.chmod(out / "tornado.csv", 0o600)
    os.chmod(out, 0o770)
    write_result_set(out, {**SET_A, "report.md": "# again\n"})
    assert _mode(out / "report.md") == 0o664 and _mode(out / "tornado.csv") == 0o600
    assert _mode(out) == 0o770
    single = tmp_path / "s.toml"
    write_atomic(single, "a")
    os.chmod(single, 0o660)
    write_atomic(single, "b")
    assert _mode(single) == 0o660 and single.read_text() == "b"


def test_write_atomic_refuses_a_folder_and_leaves_no_temporary(tmp_path):
    with pytest.raises(IsADirectoryError):
        write_atomic(tmp_path, "x")
    assert not list(tmp_path.iterdir())


# ------------------------------------------------------------------------------------------
# before computing: the folder, the space, the inputs
# ------------------------------------------------------------------------------------------
def test_check_out_names_the_folder_and_the_rule(tmp_path):
    f = tmp_path / "file"
    f.write_text("x")
    with pytest.raises(OutputError, match="--out .*file': exists and is not a folder"):
        check_out(f, False, what="--out")
    with pytest.raises(OutputError, match=r"cannot be created, .*file' is not a folder"):
        check_out(f / "sub", False)
    dangling = tmp_path / "dangling"
    dangling.symlink_to(tmp_path / "missing" / "deeper")
    with pytest.raises(OutputError, match="a link to .*which does not exist"):
        check_out(dangling, True)
    with pytest.raises(OutputError, match=r"MB free on its disk; a result set needs about"):
        check_out(tmp_path / "new", False, expected_bytes=2**62)
    (tmp_path / "res").mkdir()
    (tmp_path / "res" / ".pipeopt-new-1-2").mkdir()     # a temporary does not count
    assert check_out(tmp_path / "res", False) == tmp_path / "res"
    (tmp_path / "res" / "x.csv").write_text("x")
    with pytest.raises(OutputError, match="not empty; use --force"):
        check_out(tmp_path / "res", False)
    assert check_out(tmp_path / "res", True) == tmp_path / "res"
    assert not (tmp_path / "new").exists()                # nothing is created by the check


@pytest.mark.skipif(hasattr(os, "geteuid") and os.geteuid() == 0,
                    reason="the superuser may write in a read-only folder")
def test_check_out_refuses_a_read_only_folder(tmp_path):
    ro = tmp_path / "ro"
    ro.mkdir()
    ro.chmod(0o555)
    try:
        with pytest.raises(OutputError, match="cannot write in"):
            check_out(ro / "res", False)
    finally:
        ro.chmod(0o755)


def test_inputs_are_never_outputs(tmp_path):
    out = tmp_path / "res"
    out.mkdir()
    study = out / "report.md"
    study.write_text("[study]\n")
    with pytest.raises(OutputError, match="'report.md' would replace the input"):
        check_inputs(out, [study], ["report.md", "*.csv"])
    with pytest.raises(OutputError, match="'report.md' would replace the input"):
        write_result_set(out, SET_A, protect=[study])
    assert study.read_text() == "[study]\n"
    # a link in the folder that resolves to an input elsewhere
    elsewhere = tmp_path / "study.toml"
    elsewhere.write_text("[study]\n")
    study.unlink()
    study.symlink_to(elsewhere)
    with pytest.raises(OutputError, match="'report.md' would replace the input"):
        check_inputs(out, [elsewhere], ["report.md"])
    # a file the previous set owns counts too (--force would remove it)
    study.unlink()
    write_result_set(out, SET_A)
    with pytest.raises(OutputError, match="'tornado.csv' would replace"):
        check_inputs(out, [out / "tornado.csv"], ["report.md"])
    # an input beside the set, or in the folder under another name, is fine
    (out / "study.toml").write_text("[study]\n")
    check_inputs(out, [elsewhere, out / "study.toml"], ["report.md", "tornado.csv"])
    write_result_set(out, SET_B, protect=[out / "study.toml"])
    assert (out / "study.toml").read_text() == "[study]\n"


# ------------------------------------------------------------------------------------------
# faults: a full disk, signals
# ------------------------------------------------------------------------------------------
def test_a_full_disk_leaves_the_previous_set(tmp_path, monkeypatch):
    out = tmp_path / "res"
    write_result_set(out, SET_A)
    real = os.write
    count = [0]

    def write(fd, data):
        count[0] += 1
        if count[0] == 2:
            raise OSError(errno.ENOSPC, "No space left on device")
        return real(fd, data)

    monkeypatch.setattr(outputs.os, "write", write)
    with pytest.raises(OutputError, match="No space left on device.*previous result set is "
                                          "unchanged"):
        write_result_set(out, SET_B)
    monkeypatch.setattr(outputs.os, "write", real)
    assert read_manifest(out).names == list(SET_A)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["res"]


def _signal_while_staging(monkeypatch, signum, after=2):
    real = outputs._write_file
    calls = [0]

    def write(*args, **kw):
        calls[0] += 1
        if calls[0] == after:
            os.kill(os.getpid(), signum)
            time.sleep(0.5)  # the handler runs at the next bytecode; make sure it has
        return real(*args, **kw)

    monkeypatch.setattr(outputs, "_write_file", write)


def test_ctrl_c_while_writing_removes_the_staging_folder(tmp_path, monkeypatch):
    out = tmp_path / "res"
    write_result_set(out, SET_A)
    before = signal.getsignal(signal.SIGINT)
    _signal_while_staging(monkeypatch, signal.SIGINT)
    with pytest.raises(KeyboardInterrupt):
        write_result_set(out, SET_B)
    assert signal.getsignal(signal.SIGINT) is before
    assert read_manifest(out).names == list(SET_A)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["res"]


def test_sigterm_in_the_cli_while_writing_exits_143_and_keeps_the_old_set(tmp_path,
                                                                        monkeypatch, capsys):
    from pipeopt import cli, report

    out = tmp_path / "res"
    write_result_set(out, SET_A)
    before = signal.getsignal(signal.SIGTERM)
    monkeypatch.setattr(report, "report_files", lambda *a, **k: dict(SET_B))
    _signal_while_staging(monkeypatch, signal.SIGTERM)
    code = cli.main(["upgrade", str(DATA / "tullomere_booster.toml"), "--out", str(out),
                     "--force"])
    assert code == 128 + signal.SIGTERM
    assert "terminated" in capsys.readouterr().err
    assert signal.getsignal(signal.SIGTERM) is before
    assert read_manifest(out).names == list(SET_A)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["res"]


@pytest.mark.reference
def test_printable_removes_terminal_controls():
    # ECMA-48 (5th ed., 1991) control functions: CSI (ESC [), OSC (ESC ]) ended by BEL or ST,
    # C1 CSI (0x9B)
    assert printable("a\x1b[2J\x1b[31mb\x1b]0;title\x07c\x9b1;1Hd\x1b]8;;http://x\x1b\\e") \
        == "abcde"
    assert printable("tab\tand\nnewline\r\x00\x7f") == "tab\tand\nnewline"
    assert printable("left\u202eright") == "leftright"      # a bidirectional override
    # (U+202E RIGHT-TO-LEFT OVERRIDE: Boucher & Anderson, "Trojan Source", USENIX Security 2023;
    # docs/references.md#files-text-and-inputs-at-the-edge-outputs-report-studyfile-units)


# ------------------------------------------------------------------------------------------
# published values through a result set: digests, numbers in CSV, the free space shown
# ------------------------------------------------------------------------------------------
@pytest.mark.reference
def test_manifest_digests_are_the_fips_sha256_test_vectors(tmp_path):
    # FIPS 180-2, Appendix B.1 and B.2 (the one-block and two-block SHA-256 examples)
    files = {"one.txt": "abc",
             "two.txt": "abcdbcdecdefdefgefghfghighijhijkijkljklmklmnlmnomnopnopq"}
    write_result_set(tmp_path, files)
    doc = json.loads((tmp_path / MANIFEST).read_text())
    assert {e["name"]: e["sha256"] for e in doc["files"]} == {
        "one.txt": "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad",
        "two.txt": "248d6a61d20638b8e5c026930c3e6039a33ce45964ff2167f6ecedd419db06c1"}
    assert {e["name"]: e["size"] for e in doc["files"]} == {"one.txt": 3, "two.txt": 56}


def _crf(i, n):
    import mpmath as mp

    with mp.workdps(40):
        i = mp.mpf(i)
        return i * (1 + i) ** n / ((1 + i) ** n - 1)


@pytest.mark.reference
def test_csv_numbers_round_trip_to_ten_figures_of_the_hand_values(tmp_path):
    # CRF = i (1 + i)^n / ((1 + i)^n - 1) in 40-digit mpmath (DeGarmo et al.; the values printed
    # to 7 decimals in docs/references.md#economics), written by csv_text into a result set and
    # read back with the csv module: the ten significant figures csv_text promises
    import csv

    import mpmath as mp
    import pandas as pd

    from pipeopt.outputs import csv_text

    cases = [("0.05", 20, "0.0802426"), ("0.08", 30, "0.0888274"), ("0.03", 50, "0.0388655")]
    frame = pd.DataFrame({"rate": [float(i) for i, _, _ in cases],
                          "years": [n for _, n, _ in cases],
                          "crf": [float(_crf(i, n)) for i, n, _ in cases]})
    write_result_set(tmp_path, {"crf.csv": csv_text(frame)})
    with open(tmp_path / "crf.csv", newline="", encoding="utf-8") as fh:
        rows = list(csv.DictReader(fh))
    for row, (i, n, printed) in zip(rows, cases, strict=True):
        exact = _crf(i, n)
        got = mp.mpf(row["crf"])
        assert abs(got - exact) <= 5e-10 * abs(exact)          # half a unit of the 10th figure
        assert abs(got - mp.mpf(printed)) <= 5e-8              # the published 7 decimals
        assert len(row["crf"].lstrip("0.").replace(".", "")) <= 10
        assert (float(row["rate"]), int(row["years"])) == (float(i), n)


@pytest.mark.reference
def test_a_discounted_csv_table_sums_to_the_hand_present_value(tmp_path):
    # a cash flow of 1000 a year escalating 2 %, discounted at 5 % over 25 years: the rows of the
    # CSV, read back, sum to the closed-form present worth of a growing series A1 [1 - ((1 + g)/
    # (1 + i))^n] / (i - g) (docs/references.md#economics) within the ten figures of each row
    import csv

    import pandas as pd

    from pipeopt.outputs import csv_text

    t = list(range(1, 26))
    amount = [1000.0 * 1.02 ** (k - 1) for k in t]
    frame = pd.DataFrame({"year": t, "amount": amount,
                          "discounted": [a / 1.05**k for a, k in zip(amount, t, strict=True)]})
    write_result_set(tmp_path, {"cash.csv": csv_text(frame)})
    with open(tmp_path / "cash.csv", newline="", encoding="utf-8") as fh:
        total = sum(float(r["discounted"]) for r in csv.DictReader(fh))
    closed = 1000.0 * (1 - (1.02 / 1.05) ** 25) / (0.05 - 0.02)
    assert total == pytest.approx(closed, rel=25 * 5e-10)


@pytest.mark.reference
def test_free_space_is_shown_in_decimal_megabytes(tmp_path, monkeypatch):
    # 1 MB = 10^6 B (SI prefix mega; IEC 80000-13:2008 keeps MiB for 2^20): 123,456,789 bytes
    # free is 123.5 MB, and 200 MiB needed is 200 x 1,048,576 B = 209.7 MB, shown as 210
    from collections import namedtuple

    usage = namedtuple("usage", "total used free")
    monkeypatch.setattr(outputs.shutil, "disk_usage",
                        lambda p: usage(10**12, 10**12 - 123_456_789, 123_456_789))
    with pytest.raises(OutputError, match=r"only 123\.5 MB free on its disk; a result set "
                                          r"needs about 210 MB"):
        check_out(tmp_path / "new", False, expected_bytes=200 * 2**20)


# ------------------------------------------------------------------------------------------
# the kill test: pipeopt run --out DIR --force killed at random moments, 50 times
# ------------------------------------------------------------------------------------------
# The driver imports pipeopt once and forks one child per run; each child runs the real
# command, `pipeopt.cli.main(["run", study, "--out", DIR, "--force", "--quiet"])`, from the
# check of --out to the swap of the folder. Only the drawing of the figures is cached (the
# bytes are those of a first full run): it is what would make 50 runs take minutes.
_DRIVER = r"""
import contextlib, io, json, os, sys, threading
import pipeopt.report as report
from pipeopt import cli, outputs

real, cache = report.report_files, {}

def cached(result, extra=None, verification=True, pdf=False, paper="A4"):
    key = (result.study.name, tuple(sorted(extra or {})), verification, pdf, paper)
    if key not in cache:
        cache[key] = real(result, extra, verification, pdf, paper)
    return cache[key]

report.report_files = cached
for study in sys.argv[2:]:
    with contextlib.redirect_stdout(io.StringIO()):
        assert cli.main(["run", study, "--out", sys.argv[1], "--force", "--quiet"]) == 0
assert threading.active_count() == 1, "threads alive before fork"
channel = sys.stdout.buffer
channel.write(b"ready\n"); channel.flush()
for line in sys.stdin:
    cmd = json.loads(line)
    pid = os.fork()
    if pid == 0:
        code = 99
        try:
            null = os.open(os.devnull, os.O_WRONLY)
            os.dup2(null, 1)
            if not cmd["exchange"]:
                outputs._renameat2 = None
            code = cli.main(cmd["args"])
        except BaseException:
            import traceback
            traceback.print_exc()
        finally:
            os._exit(code)
    channel.write(f"{pid}\n".encode()); channel.flush()
    _, status = os.waitpid(pid, 0)
    channel.write(f"{os.waitstatus_to_exitcode(status)}\n".encode()); channel.flush()
"""


class _Driver:
    def __init__(self, scratch: Path, studies: list[Path], log: Path) -> None:
        env = {**os.environ, "OPENBLAS_NUM_THREADS": "1", "OMP_NUM_THREADS": "1",
               "MKL_NUM_THREADS": "1", "MPLBACKEND": "Agg"}
        self.log = open(log, "wb")
        self.proc = subprocess.Popen([sys.executable, "-c", _DRIVER, str(scratch),
                                      *map(str, studies)], stdin=subprocess.PIPE,
                                     stdout=subprocess.PIPE, stderr=self.log, env=env,
                                     bufsize=0)
        self.buffer = b""

    def line(self, timeout: float = 120.0) -> str:
        deadline = time.monotonic() + timeout
        while b"\n" not in self.buffer:
            left = deadline - time.monotonic()
            ready, _, _ = select.select([self.proc.stdout], [], [], max(0.0, left))
            if not ready:
                raise TimeoutError(f"the kill-test driver said nothing for {timeout} s")
            chunk = os.read(self.proc.stdout.fileno(), 4096)
            if not chunk:
                raise RuntimeError("the kill-test driver ended; see its log")
            self.buffer += chunk
        line, _, self.buffer = self.buffer.partition(b"\n")
        return line.decode()

    def start(self, args: list[str], exchange: bool = True) -> int:
        self.proc.stdin.write((json.dumps({"args": args, "exchange": exchange}) + "\n")
                              .encode())
        return int(self.line())

    def close(self) -> None:
        try:
            self.proc.stdin.close()
            self.proc.wait(timeout=30)
        except subprocess.TimeoutExpired:
            self.proc.kill()
            self.proc.wait(timeout=30)
        self.log.close()


@pytest.fixture(scope="module")
def driver(tmp_path_factory):
    if not hasattr(os, "fork"):
        pytest.skip("the kill test forks")
    base = tmp_path_factory.mktemp("kill")
    with_uncertainty = DATA / "marrowin_flats.toml"    # writes switching and Monte Carlo files
    plain = base / "marrowin_plain.toml"
    text = with_uncertainty.read_text(encoding="utf-8")
    plain.write_text(text[:text.index("[uncertainty]")], encoding="utf-8")
    d = _Driver(base / "scratch", [with_uncertainty, plain], base / "driver.log")
    try:
        assert d.line(timeout=600) == "ready"
        yield d, {"A": with_uncertainty, "B": plain}
    finally:
        d.close()


def _timed_run(d: _Driver, args: list[str], exchange: bool = True) -> float:
    t0 = time.monotonic()
    d.start(args, exchange)
    assert d.line() == "0"
    return time.monotonic() - t0


def _references(d: _Driver, studies: dict, out: Path, order: str, exchange: bool = True):
    """The command of each study, its time uninterrupted [s] and the manifest it leaves."""
    args = {k: ["run", str(v), "--out", str(out), "--force", "--quiet"]
            for k, v in studies.items()}
    seconds, refs = {}, {}
    for k in order:
        seconds[k] = _timed_run(d, args[k], exchange)
        refs[k] = read_manifest(out).files
    return args, seconds, refs


def _killed(d: _Driver, args: list[str], delay: float, sig: int, exchange: bool = True) -> int:
    """Start a run, send it ``sig`` after ``delay`` seconds; its exit status."""
    pid = d.start(args, exchange)
    time.sleep(delay)
    try:
        os.kill(pid, sig)
    except ProcessLookupError:
        pass
    return int(d.line())


def _foreign(folder: Path) -> dict[str, bytes]:
    (folder / "notes.txt").write_bytes(b"notes of the engineer")
    (folder / "drafts").mkdir(exist_ok=True)
    (folder / "drafts" / "sketch.txt").write_bytes(b"a sketch")
    return {"notes.txt": b"notes of the engineer", "drafts/sketch.txt": b"a sketch"}


@pytest.mark.slow
def test_kill_at_random_moments_leaves_the_old_set_or_the_new(driver, tmp_path):
    d, studies = driver
    out = tmp_path / "results"
    args, seconds, refs = _references(d, studies, out, "ABAB")
    assert {"switching_values.csv", "monte_carlo.csv"} <= set(refs["A"])
    assert not {"switching_values.csv", "monte_carlo.csv"} & set(refs["B"])
    assert "tornado.csv" in set(refs["A"]) & set(refs["B"])     # a tornado in every report
    foreign = _foreign(out)
    rng = random.Random(13)
    current = refs["B"]
    kept_old = took_new = 0
    t_start = time.monotonic()
    for _ in range(50):
        k = rng.choice("AB")
        sig = rng.choice([signal.SIGKILL, signal.SIGTERM])
        t = seconds[k]
        # early, late, and after the time an uninterrupted run took (on a loaded machine a run
        # can take longer than its reference, so some kills must come after it for the test
        # to see runs that finish)
        low, high = rng.choice([(0.0, 1.0), (0.5, 1.0), (1.0, 2.5)])
        delay = rng.uniform(low * t, high * t)
        code = _killed(d, args[k], delay, sig)
        allowed = {0, -signal.SIGKILL} if sig == signal.SIGKILL else \
            {0, 128 + signal.SIGTERM, -signal.SIGTERM}
        assert code in allowed, (code, sig)
        got = read_manifest(out).files                  # never raises: always one whole set
        assert got in (current, refs[k])
        if refs[k] != current:
            kept_old += got == current
            took_new += got == refs[k]
        current = got
        for name, data in foreign.items():               # files pipeopt did not write stay
            assert (out / name).read_bytes() == data
        assert _listing(out) <= set(got) | set(foreign) | {MANIFEST, "figures", "drafts"}
    print(f"kill test: {kept_old} kept the old set, {took_new} took the new one")
    assert kept_old >= 1 and took_new >= 1, (kept_old, took_new)
    print(f"kill test: 50 runs in {time.monotonic() - t_start:.0f} s")
    # the next run removes what killed runs left beside the folder
    _timed_run(d, args["A"])
    assert read_manifest(out).files == refs["A"]
    assert sorted(p.name for p in tmp_path.iterdir()) == ["results"]
    assert not [p for p in out.iterdir() if p.name.startswith(".")]


@pytest.mark.slow
def test_kill_during_in_place_replacement_never_passes_a_mixture(driver, tmp_path):
    # where the folder cannot be exchanged, a set being replaced is marked incomplete, so the
    # reader refuses it; the next run replaces it whole
    d, studies = driver
    out = tmp_path / "results"
    args, seconds, refs = _references(d, studies, out, "AB", exchange=False)
    foreign = _foreign(out)
    rng = random.Random(7)
    incomplete = 0
    for _ in range(12):
        k = rng.choice("AB")
        _killed(d, args[k], rng.uniform(0.6 * seconds[k], 1.05 * seconds[k]), signal.SIGKILL,
                exchange=False)
        try:
            got = read_manifest(out).files
        except IncompleteResultSet:
            incomplete += 1
        else:
            assert got in (refs["A"], refs["B"])
        for name, data in foreign.items():
            assert (out / name).read_bytes() == data
    _timed_run(d, args["A"], exchange=False)
    assert read_manifest(out).files == refs["A"]
    assert _listing(out) <= set(refs["A"]) | set(foreign) | {MANIFEST, "figures", "drafts"}


@pytest.mark.reference
def test_printable_removes_every_unicode_control_character():
    # the Unicode Character Database, through the unicodedata module: every character of
    # general category Cc (the C0 and C1 controls and DEL, 65 of them) is removed, but the tab
    # and the newline; ESC and the one-byte CSI go with the sequence they start (ECMA-48, 5.4)
    import unicodedata

    controls = [chr(c) for c in range(sys.maxunicode + 1)
                if unicodedata.category(chr(c)) == "Cc"]
    assert len(controls) == 65
    for ch in controls:
        if ch in "\t\n":
            assert printable(f"a{ch}b") == f"a{ch}b"
        elif ch in "\x1b\x9b":
            start = "\x1b[" if ch == "\x1b" else ch
            assert printable(f"a{start}0;1mb") == "ab", hex(ord(ch))
        else:
            assert printable(f"a{ch}b") == "ab", hex(ord(ch))


@pytest.mark.reference
def test_printable_removes_the_bidirectional_embeddings_overrides_and_isolates():
    # Boucher & Anderson, "Trojan Source" (USENIX Security 2023), Table 1: LRE, RLE, LRO, RLO,
    # PDF, LRI, RLI, FSI, PDI. Found here by their bidirectional class in the Unicode Character
    # Database (unicodedata), not by a list of code points
    import unicodedata

    classes = {"LRE", "RLE", "LRO", "RLO", "PDF", "LRI", "RLI", "FSI", "PDI"}
    found = [chr(c) for c in range(sys.maxunicode + 1)
             if unicodedata.bidirectional(chr(c)) in classes]
    assert [hex(ord(c)) for c in found] == [hex(c) for c in (*range(0x202A, 0x202F),
                                                               *range(0x2066, 0x206A))]
    for ch in found:
        assert printable(f"abc{ch}def") == "abcdef", hex(ord(ch))
