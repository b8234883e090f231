"""Result sets on disk (presentation edge): written whole, swapped in at once, with a manifest.

A *result set* is every file one run writes into an output folder (``--out``): the reports, the
workbook, the figures, the CSV tables, and ``manifest.json``, which lists every file of the set
with its size and SHA-256, the pipeopt version and ``"complete": true``. :func:`read_manifest`
reads it back and refuses a folder whose set is incomplete or has been altered.

:func:`write_result_set` gives these promises:

- **Whole sets.** Every file is first written (and flushed to disk) in a staging folder beside
  the output folder; the staging folder then takes the place of the output folder in one atomic
  exchange (Linux ``renameat2(RENAME_EXCHANGE)``). A reader sees the old set or the new set,
  never a mixture, whenever the run is killed (SIGKILL, power loss after the flush, a full
  disk). On SIGINT, SIGTERM or SIGHUP the staging folder is removed and the signal is then
  handled as it would have been. Where the folder cannot be exchanged (another operating system,
  a mount point, the current working folder, a folder owned by another user) the files are
  moved in one by one and the manifest says ``"complete": false`` until the last one is in
  place, so that :func:`read_manifest` refuses the set in between.
- **One writer at a time.** A lock file beside the folder (``.NAME.pipeopt-lock``, removed
  afterwards) makes a second run wait up to ``lock_timeout`` seconds, then refuse, naming the
  process that holds it. Temporaries left by a killed run are removed by the next run.
- **Owned files only.** A run replaces the set it owns: the files the previous manifest lists
  (a tornado table of an earlier run that this run does not write disappears) and the files of
  the new set. Any other file in the folder is kept, untouched (hard-linked into the new
  folder, so that not a byte of it is copied).
- **Inputs are never outputs.** An output path that is, or resolves to, a protected input file
  (the study file, a catalog file it names) is refused before anything is written.
- **Modes follow the umask** (0644 under 022), and a file that already exists keeps its mode.

Examples
--------
>>> import tempfile, pathlib
>>> folder = pathlib.Path(tempfile.mkdtemp()) / "results"
>>> paths = write_result_set(folder, {"table.csv": "a,b\\n1,2\\n"})
>>> [p.name for p in paths]
['table.csv', 'manifest.json']
>>> read_manifest(folder).names
['table.csv']
"""

from __future__ import annotations

import ctypes
import ctypes.util
import errno
import hashlib
import json
import os
import re
import secrets
import shutil
import signal
import stat
import sys
import threading
import time
from collections.abc import Callable, Iterable, Mapping
from dataclasses import dataclass
from pathlib import Path, PurePosixPath
from typing import Any

from . import __version__
from .errors import IncompleteResultSet, OutputError
from .terminal import printable

__all__ = ["MANIFEST", "EXPECTED_SET_BYTES", "LOCK_TIMEOUT", "Manifest", "read_manifest",
           "write_result_set", "check_out", "check_inputs", "write_atomic", "printable",
           "csv_cell", "csv_text", "text_columns", "markdown_text", "markdown_code"]

#: Name of the manifest in every result set.
MANIFEST = "manifest.json"
_FORMAT = "pipeopt result set"
_FORMAT_VERSION = 1
#: Free space asked of the disk of an output folder before a study is computed [bytes]: a
#: sizing set with uncertainty is about 1 MB (the HTML report carries its figures), the demo
#: two of them; the estimate leaves room for large candidate tables.
EXPECTED_SET_BYTES = 8 * 2**20
#: How long a run waits for another run writing into the same folder [s].
LOCK_TIMEOUT = 60.0
_MANIFEST_LIMIT = 4 * 2**20        # bytes read of a manifest at most
_TEMP = ".pipeopt-"                 # prefix of every temporary inside an output folder
_LEGACY_TMP = re.compile(r"\.(.+)\.[a-z0-9_]{8}\.tmp")   # temporaries of earlier versions


@dataclass(frozen=True)
class Manifest:
    """The manifest of a complete result set, as read back by :func:`read_manifest`.

    Attributes
    ----------
    folder : Path
        The folder holding the set.
    pipeopt_version : str
        Version of pipeopt that wrote the set.
    files : dict of str to (int, str)
        Name (relative, ``/``-separated) to (size [bytes], SHA-256 in hex) of every file of
        the set except the manifest itself.
    """

    folder: Path
    pipeopt_version: str
    files: dict

    @property
    def names(self) -> list[str]:
        """Names of the files of the set, in the manifest's order."""
        return list(self.files)

    @property
    def paths(self) -> list[Path]:
        """Paths of the files of the set."""
        return [self.folder / n for n in self.files]


# --------------------------------------------------------------------------------------------
# text made inert in the files of a result set (CSV for spreadsheets, Markdown)
# --------------------------------------------------------------------------------------------
_FORMULA_START = ("=", "+", "-", "@", "\t", "\r")
_PLAIN_NUMBER = re.compile(r"[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?|[-+]?(?:inf|nan)",
                           re.IGNORECASE)


def csv_cell(value: Any) -> Any:
    """A text cell without terminal controls; one a spreadsheet would take for a formula gets
    a leading apostrophe (a lone sign, the unit column's "-", and a plain number are no
    formula). Anything but text is returned as it is.

    >>> csv_cell("=HYPERLINK(1)"), csv_cell("-"), csv_cell("-2.5"), csv_cell(3)
    ("'=HYPERLINK(1)", '-', '-2.5', 3)
    """
    if not isinstance(value, str):
        return value
    value = printable(value)
    if (len(value) > 1 and value.startswith(_FORMULA_START)
            and not _PLAIN_NUMBER.fullmatch(value)):
        return "'" + value
    return value


def text_columns(frame: Any) -> list:
    """The columns of a pandas DataFrame that hold text (object or string dtype)."""
    import pandas as pd

    return [c for c in frame.columns if frame[c].dtype == object
            or isinstance(frame[c].dtype, pd.StringDtype)]


def csv_text(frame: Any) -> str:
    """A pandas DataFrame as CSV text whose text cells and headers are inert
    (:func:`csv_cell`); numbers to ten significant digits, no index, newline line ends."""
    safe = frame.copy()
    for c in text_columns(safe):
        safe[c] = safe[c].map(csv_cell)
    safe.columns = [csv_cell(str(c)) for c in safe.columns]
    return safe.to_csv(index=False, float_format="%.10g", lineterminator="\n")


_MD_SPECIAL = re.compile(r"([\\`\[\]|])")


def markdown_text(text: Any) -> str:
    """Study text for Markdown: one line, HTML, links, code spans and table bars escaped.

    >>> markdown_text("a | b <i>[x](y)")
    'a \\\\| b &lt;i&gt;\\\\[x\\\\](y)'
    """
    import html

    text = _MD_SPECIAL.sub(r"\\\1", printable(str(text), one_line=True))
    return html.escape(text, quote=False)


def markdown_code(text: str) -> list[str]:
    """A fenced code block (its lines) that no backticks in ``text`` can close early."""
    text = printable(text)
    longest = max((len(run) for run in re.findall(r"`+", text)), default=0)
    fence = "`" * max(3, longest + 1)
    return [fence, text, fence]


# --------------------------------------------------------------------------------------------
# names and folders
# --------------------------------------------------------------------------------------------
def _check_name(name: str) -> str:
    """A file name of a set: relative, '/'-separated, no '..', no hidden part, not the manifest."""
    parts = PurePosixPath(name).parts if isinstance(name, str) else ()
    if (not parts or name != "/".join(parts) or "\\" in name or name == MANIFEST
            or any(p in (".", "..") or p.startswith(".") or len(p.encode()) > 255
                   for p in parts)):
        raise ValueError(f"result set: {name!r} is not a valid file name of a result set")
    return name


def _valid_name(name: object) -> bool:
    try:
        return isinstance(name, str) and bool(_check_name(name))
    except ValueError:
        return False


def _target(folder: str | Path, what: str) -> Path:
    """The real folder behind ``folder`` (links followed); refuses a file or a broken link."""
    p = Path(folder)
    if p.is_symlink() and not p.exists():
        raise OutputError(f"{what} {str(p)!r}: a link to {os.readlink(p)!r}, which does not "
                          f"exist; create that folder or give another one")
    t = p.resolve()
    if t.exists() and not t.is_dir():
        raise OutputError(f"{what} {str(p)!r}: exists and is not a folder")
    return t


def _nearest_existing(path: Path) -> Path:
    while not path.exists() and path.parent != path:
        path = path.parent
    return path


def _probe(folder: Path) -> OSError | None:
    """Try to create and remove a file in ``folder``; the error, or None when it worked."""
    probe = folder / f"{_TEMP}probe-{os.getpid()}-{secrets.token_hex(4)}"
    try:
        os.close(os.open(probe, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o600))
        os.unlink(probe)
    except OSError as exc:
        return exc
    return None


def _visible_entries(t: Path) -> list[str]:
    """Entries of an output folder other than pipeopt's own temporaries."""
    try:
        return [e for e in os.listdir(t) if not e.startswith(_TEMP)]
    except FileNotFoundError:
        return []


def _writable(folder: Path) -> bool:
    return os.access(folder, os.W_OK | os.X_OK)


def check_out(folder: str | Path, force: bool, expected_bytes: int = EXPECTED_SET_BYTES,
              what: str = "output folder") -> Path:
    """Check, before any computation, that a result set can be written into ``folder``.

    Parameters
    ----------
    folder : path
        The output folder; it may not exist yet.
    force : bool
        Whether a folder that already holds files may receive the set.
    expected_bytes : int
        Free space the disk must offer [bytes] (default :data:`EXPECTED_SET_BYTES`).
    what : str
        How messages name the folder (the CLI says ``--out``).

    Returns
    -------
    Path
        ``folder`` as a Path.

    Raises
    ------
    OutputError
        Naming the folder: it is a file or a broken link, cannot be created or written, its disk
        has too little free space, or it holds files and ``force`` is false.
    """
    p = Path(folder)
    t = _target(p, what)
    if t.exists():
        if _visible_entries(t) and not force:
            raise OutputError(f"{what} {str(p)!r}: the folder is not empty; use --force to "
                              f"overwrite its results")
        place = t.parent if t.parent != t and _writable(t.parent) else t
    else:
        place = _nearest_existing(t.parent)
        if not place.is_dir():
            raise OutputError(f"{what} {str(p)!r}: cannot be created, {str(place)!r} is not a "
                              f"folder")
    problem = _probe(place)
    if problem is not None and place != t and t.exists():
        place, problem = t, _probe(t)
    if problem is not None:
        raise OutputError(f"{what} {str(p)!r}: cannot write in {str(place)!r} "
                          f"({problem.strerror or problem})")
    free = shutil.disk_usage(place).free
    if free < expected_bytes:
        raise OutputError(f"{what} {str(p)!r}: only {free / 1e6:.1f} MB free on its disk; a "
                          f"result set needs about {expected_bytes / 1e6:.0f} MB")
    return p


def _owned(t: Path) -> set[str]:
    """Names the manifest in ``t`` says pipeopt wrote (complete or not); invalid ones ignored."""
    try:
        with open(t / MANIFEST, "rb") as fh:
            data = json.loads(fh.read(_MANIFEST_LIMIT + 1)[:_MANIFEST_LIMIT])
    except (OSError, ValueError):
        return set()
    if not isinstance(data, dict) or data.get("format") != _FORMAT:
        return set()
    names = [f.get("name") for f in data.get("files", []) if isinstance(f, dict)]
    names += list(data.get("replacing", []) if isinstance(data.get("replacing"), list) else [])
    return {n for n in names if _valid_name(n)}


def _reachable(t: Path, wanted: Callable[[str], bool], depth: int = 3) -> list[str]:
    """Names under ``t`` (files and links, ``depth`` levels) that ``wanted`` accepts."""
    out = []
    stack = [(t, "", 0)]
    while stack:
        folder, prefix, level = stack.pop()
        try:
            entries = list(os.scandir(folder))
        except OSError:
            continue
        for e in entries[:10000]:
            rel = prefix + e.name
            if e.is_dir(follow_symlinks=False):
                if level + 1 < depth:
                    stack.append((Path(e.path), rel + "/", level + 1))
            elif wanted(rel):
                out.append(rel)
    return out


def _conflicts(t: Path, inputs: Iterable[str | Path], wanted: Callable[[str], bool],
               names: Iterable[str] = ()) -> list[tuple[str, str]]:
    """(output name, input) pairs where an output would be, or replace, an input file."""
    protected = [Path(i).resolve() for i in inputs if str(i) not in ("", "-")]
    if not protected:
        return []
    candidates = set(names) | set(_reachable(t, wanted)) | {MANIFEST}
    for i in protected:
        if i == t or t in i.parents:
            rel = i.relative_to(t).as_posix()
            if i == t or wanted(rel):
                candidates.add(rel)
    found = []
    for rel in sorted(candidates):
        o = t / rel
        for i in protected:
            if o == i or o.resolve() == i or o in i.parents or i in o.parents:
                found.append((rel, str(i)))
    return found


def check_inputs(folder: str | Path, inputs: Iterable[str | Path],
                 patterns: Iterable[str] = ("*",), what: str = "output folder") -> None:
    """Refuse before computing when a file the set may write is one of the ``inputs``.

    Parameters
    ----------
    folder : path
        The output folder.
    inputs : paths
        Files the run reads (the study file, the catalog files it names); ``"-"`` (standard
        input) is skipped.
    patterns : str
        Shell patterns (``fnmatch``, on ``/``-separated names relative to the folder) of the
        files the set may write; the names the folder's manifest lists are always included.
    what : str
        How messages name the folder.

    Raises
    ------
    OutputError
        Naming the output and the input it would replace.
    """
    import fnmatch

    t = _target(Path(folder), what)
    owned = _owned(t)
    pats = list(patterns)

    def wanted(rel: str) -> bool:
        return rel in owned or rel == MANIFEST or any(fnmatch.fnmatchcase(rel, p) for p in pats)

    found = _conflicts(t, inputs, wanted)
    if found:
        rel, inp = found[0]
        raise OutputError(f"{what} {str(folder)!r}: the result file {rel!r} would replace the "
                          f"input {inp!r}; choose another output folder")


# --------------------------------------------------------------------------------------------
# low-level writing
# --------------------------------------------------------------------------------------------
def _write_file(path: Path, data: bytes, mode: int | None = None, sync: bool = True) -> None:
    """Create ``path`` (it must not exist) with the umask's mode, or ``mode``, and fill it."""
    fd = os.open(path, os.O_WRONLY | os.O_CREAT | os.O_EXCL | getattr(os, "O_CLOEXEC", 0),
                 0o666)
    try:
        if mode is not None and hasattr(os, "fchmod"):
            os.fchmod(fd, mode)
        view = memoryview(data)
        while view:
            view = view[os.write(fd, view):]
        if sync:
            os.fsync(fd)
    finally:
        os.close(fd)


def _fsync_dir(folder: Path) -> None:
    try:
        fd = os.open(folder, os.O_RDONLY)
    except OSError:
        return
    try:
        os.fsync(fd)
    except OSError:
        pass
    finally:
        os.close(fd)


def _kept_mode(path: Path) -> int | None:
    """The permission bits of an existing regular file (not a link), else None."""
    try:
        st = os.lstat(path)
    except OSError:
        return None
    return stat.S_IMODE(st.st_mode) if stat.S_ISREG(st.st_mode) else None


def _remove(path: Path) -> None:
    """Remove a file, link or folder tree (links are removed, never followed)."""
    try:
        st = os.lstat(path)
    except FileNotFoundError:
        return
    if stat.S_ISDIR(st.st_mode):
        shutil.rmtree(path, ignore_errors=True)
    else:
        try:
            os.unlink(path)
        except FileNotFoundError:
            pass


def _as_bytes(data: bytes | str) -> bytes:
    return data.encode("utf-8") if isinstance(data, str) else bytes(data)


def write_atomic(path: str | Path, data: bytes | str) -> None:
    """Write one file through a temporary in the same folder and a rename.

    The file gets the mode the umask gives a new file (0644 under 022), or keeps the mode of
    the file it replaces.

    Raises
    ------
    OSError
        When the folder cannot be written; ``path`` is then unchanged.
    """
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    if path.is_dir():
        raise IsADirectoryError(errno.EISDIR, "is a folder", str(path))
    tmp = path.parent / f".{path.name}.{secrets.token_hex(4)}.tmp"
    try:
        _write_file(tmp, _as_bytes(data), _kept_mode(path), sync=False)
        os.replace(tmp, path)
    except BaseException:
        _remove(tmp)
        raise


# --------------------------------------------------------------------------------------------
# the exchange of two folders (Linux renameat2)
# --------------------------------------------------------------------------------------------
_AT_FDCWD = -100
_RENAME_EXCHANGE = 2


def _load_renameat2():
    if not sys.platform.startswith("linux"):
        return None
    try:
        libc = ctypes.CDLL(ctypes.util.find_library("c") or None, use_errno=True)
        fn = libc.renameat2
    except (OSError, AttributeError):
        return None
    fn.argtypes = [ctypes.c_int, ctypes.c_char_p, ctypes.c_int, ctypes.c_char_p, ctypes.c_uint]
    fn.restype = ctypes.c_int
    return fn


_renameat2 = _load_renameat2()


def _exchange(a: Path, b: Path) -> bool:
    """Swap two folders atomically; False when the system or file system cannot."""
    if _renameat2 is None:
        return False
    if _renameat2(_AT_FDCWD, os.fsencode(a), _AT_FDCWD, os.fsencode(b), _RENAME_EXCHANGE) == 0:
        return True
    err = ctypes.get_errno()
    if err in (errno.EINVAL, errno.ENOSYS, errno.EOPNOTSUPP, errno.ENOTSUP, errno.EXDEV,
               errno.EPERM, errno.EACCES, errno.EBUSY):
        return False
    raise OSError(err, os.strerror(err), str(b))


# --------------------------------------------------------------------------------------------
# lock and signals
# --------------------------------------------------------------------------------------------
try:
    import fcntl
except ImportError:  # pragma: no cover - not POSIX
    fcntl = None


def _try_lock(fd: int) -> bool:
    if fcntl is not None:
        try:
            fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
        except OSError as exc:
            if exc.errno in (errno.EWOULDBLOCK, errno.EAGAIN, errno.EACCES):
                return False
            raise
        return True
    import msvcrt  # pragma: no cover - Windows

    try:  # pragma: no cover
        msvcrt.locking(fd, msvcrt.LK_NBLCK, 1)
    except OSError:  # pragma: no cover
        return False
    return True  # pragma: no cover


class _Lock:
    """An exclusive lock on a file, waited for up to ``timeout`` seconds; released by the
    system when the process ends, whatever ends it."""

    def __init__(self, path: Path, timeout: float, what: str) -> None:
        self.path, self.timeout, self.what = path, timeout, what
        self.fd: int | None = None

    def __enter__(self) -> _Lock:
        deadline = time.monotonic() + max(0.0, self.timeout)
        pause = 0.02
        while True:
            fd = os.open(self.path, os.O_RDWR | os.O_CREAT | getattr(os, "O_CLOEXEC", 0), 0o666)
            if _try_lock(fd):
                try:
                    same = os.stat(self.path).st_ino == os.fstat(fd).st_ino
                except FileNotFoundError:
                    same = False
                if same:  # not a lock file that the previous holder removed meanwhile
                    os.ftruncate(fd, 0)
                    os.write(fd, f"{os.getpid()}\n".encode())
                    self.fd = fd
                    return self
                os.close(fd)
                continue
            try:
                holder = os.read(fd, 32).decode("ascii", "replace").strip()
            except OSError:
                holder = ""
            os.close(fd)
            if time.monotonic() >= deadline:
                who = f" (process {holder})" if holder.isdigit() else ""
                raise OutputError(f"{self.what}: another pipeopt run{who} is writing into this "
                                  f"folder; waited {self.timeout:g} s. Try again when it has "
                                  f"finished, or choose another folder")
            time.sleep(min(pause, max(0.0, deadline - time.monotonic())))
            pause = min(pause * 2, 0.25)

    def __exit__(self, *exc) -> None:
        if self.fd is not None:
            try:
                os.unlink(self.path)
            except OSError:
                pass
            os.close(self.fd)
            self.fd = None


class _Abort(BaseException):
    """Raised inside the writer by a termination signal (never leaves this module)."""


_SIGNALS = tuple(getattr(signal, n) for n in ("SIGINT", "SIGTERM", "SIGHUP") if hasattr(signal, n))


class _SignalGuard:
    """While a set is written, SIGINT/SIGTERM/SIGHUP stop the writing (the caller cleans up);
    afterwards the signal is delivered again to the handler that was in place before."""

    def __init__(self) -> None:
        self.old: dict = {}
        self.caught: int | None = None
        self.active = True  # False: a signal is remembered, not raised (clean-up under way)

    def __enter__(self) -> _SignalGuard:
        if threading.current_thread() is threading.main_thread():
            for s in _SIGNALS:
                h = signal.getsignal(s)
                if h in (signal.SIG_IGN, None):
                    continue
                self.old[s] = h
                signal.signal(s, self._handler)
        return self

    def _handler(self, signum, frame) -> None:
        if self.caught is None:
            self.caught = signum
            if self.active:
                self.active = False
                raise _Abort(signum)

    def __exit__(self, et, ev, tb) -> bool:
        self.active = False
        block = hasattr(signal, "pthread_sigmask") and self.old
        if block:
            signal.pthread_sigmask(signal.SIG_BLOCK, list(self.old))
        try:
            for s, h in self.old.items():
                signal.signal(s, h)
        finally:
            if block:
                signal.pthread_sigmask(signal.SIG_UNBLOCK, list(self.old))
        if self.caught is not None:
            signal.raise_signal(self.caught)  # the previous handler: exit, or an exception
            raise OutputError(f"interrupted by signal {self.caught}; the previous result set "
                              f"is unchanged")
        return False


# --------------------------------------------------------------------------------------------
# the writer
# --------------------------------------------------------------------------------------------
def _manifest_bytes(entries: list[dict], complete: bool, replacing: Iterable[str] = ()) -> bytes:
    doc = {"format": _FORMAT, "format_version": _FORMAT_VERSION, "pipeopt_version": __version__,
           "complete": complete, "files": entries}
    if not complete:
        doc["replacing"] = sorted(replacing)
    return (json.dumps(doc, indent=1, ensure_ascii=False) + "\n").encode("utf-8")


def _clean_stale(t: Path, beside: str | None, names: Iterable[str]) -> None:
    """Remove what killed runs left: staging folders, pipeopt temporaries, old ``*.tmp``."""
    if beside is not None:
        for e in os.scandir(t.parent):
            if e.name.startswith(beside):
                _remove(Path(e.path))
    if not t.is_dir():
        return
    for e in os.scandir(t):
        if e.name.startswith(_TEMP) and e.name != f"{_TEMP}lock":
            _remove(Path(e.path))
    by_folder: dict[str, set[str]] = {}
    for n in names:
        parent, _, base = n.rpartition("/")
        by_folder.setdefault(parent, set()).add(base)
    for parent, bases in by_folder.items():
        folder = t / parent if parent else t
        if not folder.is_dir() or folder.is_symlink():
            continue
        for e in os.scandir(folder):
            m = _LEGACY_TMP.fullmatch(e.name)
            if m and m.group(1) in bases and e.is_file(follow_symlinks=False):
                _remove(Path(e.path))


def _blocked(t: Path, names: Iterable[str]) -> str | None:
    """A set name whose place in ``t`` is taken by something pipeopt will not replace."""
    for n in names:
        parts = n.split("/")
        for k in range(1, len(parts)):
            p = t.joinpath(*parts[:k])
            if os.path.lexists(p) and (p.is_symlink() or not p.is_dir()):
                return "/".join(parts[:k])
        leaf = t / n
        if leaf.is_dir() and not leaf.is_symlink():
            return n
    return None


def _stage(staging: Path, t: Path, files: dict[str, bytes]) -> list[dict]:
    """Write the files of the set into ``staging``; the manifest entries, in order."""
    entries = []
    for name, data in files.items():
        dest = staging / name
        parts = name.split("/")
        for k in range(1, len(parts)):
            d = staging.joinpath(*parts[:k])
            if not d.exists():
                os.mkdir(d, 0o777)
                old = t.joinpath(*parts[:k])
                if old.is_dir() and not old.is_symlink():
                    os.chmod(d, stat.S_IMODE(os.stat(old).st_mode))
        _write_file(dest, data, _kept_mode(t / name))
        entries.append({"name": name, "size": len(data),
                        "sha256": hashlib.sha256(data).hexdigest()})
    return entries


def _real_folders(t: Path, name: str) -> bool:
    """Whether every folder on the way from ``t`` to ``name`` is a real folder (not a link)."""
    parts = name.split("/")
    for k in range(1, len(parts)):
        try:
            if not stat.S_ISDIR(os.lstat(t.joinpath(*parts[:k])).st_mode):
                return False
        except FileNotFoundError:
            return True
    return True


def _link_others(t: Path, staging: Path, owned: set[str]) -> bool:
    """Hard-link every file of ``t`` that pipeopt does not own into ``staging``.

    Links stay links, folders keep their mode, empty folders of the user stay; folders that
    held only owned files are not carried over. False when this cannot be done faithfully (the
    folder or one inside it owned by another user, a file system without hard links): the
    caller then replaces the files in place.
    """
    uid = os.geteuid() if hasattr(os, "geteuid") else None
    if uid is not None and os.stat(t).st_uid != uid:
        return False

    def make_parents(rel: str) -> None:
        parts = rel.split("/")
        for k in range(1, len(parts)):
            dest = staging.joinpath(*parts[:k])
            if not os.path.lexists(dest):
                os.mkdir(dest, 0o777)
                os.chmod(dest, stat.S_IMODE(os.lstat(t.joinpath(*parts[:k])).st_mode))
            elif dest.is_symlink() or not dest.is_dir():
                raise OutputError(f"{'/'.join(parts[:k])!r} is a folder that pipeopt did not "
                                  f"write, where the result set has a file; move it away")

    owned_folders = {n.rsplit("/", k)[0] for n in owned for k in range(1, n.count("/") + 1)}
    try:
        for root, dirs, files in os.walk(t):
            base = Path(root)
            rel_root = base.relative_to(t).as_posix()
            prefix = "" if rel_root == "." else rel_root + "/"
            for d in list(dirs):
                src = base / d
                if (not prefix and d.startswith(_TEMP)) or src.is_symlink():
                    dirs.remove(d)
                    if src.is_symlink():
                        files.append(d)
                    continue
                if uid is not None and os.lstat(src).st_uid != uid:
                    return False
                if not os.listdir(src) and prefix + d not in owned_folders:
                    make_parents(prefix + d + "/x")          # an empty folder of the user
            for f in files:
                rel = prefix + f
                if rel in owned or (not prefix and f.startswith(_TEMP)):
                    continue
                src, dest = base / f, staging / rel
                make_parents(rel)
                if os.path.lexists(dest):
                    raise OutputError(f"{rel!r} is a file that pipeopt did not write, where the "
                                      f"result set has a folder; move it away")
                if src.is_symlink():
                    os.symlink(os.readlink(src), dest)
                else:
                    os.link(src, dest, follow_symlinks=False)
    except OutputError:
        raise
    except OSError:
        return False
    return True


def _prune_empty(t: Path, names: Iterable[str]) -> None:
    parents = sorted({n.rpartition("/")[0] for n in names if "/" in n}, key=len, reverse=True)
    for parent in parents:
        try:
            os.rmdir(t / parent)
        except OSError:
            pass


def _commit_in_place(staging: Path, t: Path, names: list[str], owned_old: set[str]) -> None:
    """Move the staged files into ``t`` one by one, the manifest saying incomplete meanwhile."""
    tmp = t / f"{_TEMP}manifest-{secrets.token_hex(4)}"
    _write_file(tmp, _manifest_bytes([], False, set(names) | owned_old))
    os.replace(tmp, t / MANIFEST)
    _fsync_dir(t)
    gone = sorted(owned_old - set(names) - {MANIFEST})
    for n in gone:
        p = t / n
        if _real_folders(t, n) and (p.is_symlink() or p.is_file()):
            p.unlink()
    _prune_empty(t, gone)
    for n in names:
        parts = n.split("/")
        for k in range(1, len(parts)):
            d = t.joinpath(*parts[:k])
            if not d.exists():
                os.mkdir(d, 0o777)
        os.replace(staging / n, t / n)
    os.replace(staging / MANIFEST, t / MANIFEST)
    _fsync_dir(t)


def write_result_set(folder: str | Path, files: Mapping[str, bytes | str], force: bool = True,
                     protect: Iterable[str | Path] = (), lock_timeout: float = LOCK_TIMEOUT,
                     what: str = "output folder") -> list[Path]:
    """Write a whole result set into ``folder``, replacing the set it held (see the module).

    Parameters
    ----------
    folder : path
        The output folder (created when missing, with its parents).
    files : mapping of str to bytes or str
        Name (relative, ``/``-separated, e.g. ``"figures/cost_curves.png"``) to content; text
        is written as UTF-8. ``manifest.json`` is added.
    force : bool
        Whether a folder holding files may receive the set (the CLI's ``--force``); when
        false, such a folder is refused even if it filled up while the run was computing.
    protect : paths
        Input files that no output may replace.
    lock_timeout : float
        How long to wait for another run writing into the same folder [s].
    what : str
        How messages name the folder.

    Returns
    -------
    list of Path
        The files of the set, ``manifest.json`` last.

    Raises
    ------
    OutputError
        When the folder cannot take the set; the previous set is then unchanged.
    """
    files = {_check_name(n): _as_bytes(d) for n, d in files.items()}
    p = Path(folder)
    t = _target(p, what)
    names = list(files)
    try:
        t.parent.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise OutputError(f"{what} {str(p)!r}: cannot be created ({exc.strerror})") from None
    beside_ok = t.parent != t and _writable(t.parent) and not (t.exists() and os.path.ismount(t))
    beside = f".{t.name}.pipeopt-new-" if beside_ok else None
    lock_path = t.parent / f".{t.name}.pipeopt-lock" if beside_ok else t / f"{_TEMP}lock"
    if not beside_ok and not t.is_dir():
        raise OutputError(f"{what} {str(p)!r}: cannot be created, {str(t.parent)!r} is not "
                          f"writable")
    staging: Path | None = None
    stage_name = ""
    try:
        with _SignalGuard() as guard, _Lock(lock_path, lock_timeout, f"{what} {str(p)!r}"):
            try:
                _clean_stale(t, beside, set(names) | _owned(t))
                exists = t.is_dir()
                if exists and _visible_entries(t) and not force:
                    raise OutputError(f"{what} {str(p)!r}: the folder is not empty (another run "
                                      f"wrote into it while this one was computing); use "
                                      f"--force to overwrite its results")
                owned_old = _owned(t) if exists else set()
                found = _conflicts(t, protect, lambda rel: rel in names or rel in owned_old,
                                   names)
                if found:
                    rel, inp = found[0]
                    raise OutputError(f"{what} {str(p)!r}: the result file {rel!r} would "
                                      f"replace the input {inp!r}; choose another output "
                                      f"folder")
                if exists and (bad := _blocked(t, names)) is not None:
                    raise OutputError(f"{what} {str(p)!r}: {bad!r} is in the way of the result "
                                      f"set (a folder or link pipeopt did not write); move it "
                                      f"away")
                stage_name = f"{beside or _TEMP + 'new-'}{os.getpid()}-{secrets.token_hex(4)}"
                staging = (t.parent if beside else t) / stage_name
                os.mkdir(staging, 0o777)
                if exists:
                    os.chmod(staging, stat.S_IMODE(os.stat(t).st_mode))
                entries = _stage(staging, t, files)
                _write_file(staging / MANIFEST, _manifest_bytes(entries, True))
                _fsync_dir(staging)
                try:
                    cwd = Path.cwd()
                except OSError:  # the current folder was removed
                    cwd = Path("/nonexistent-cwd")
                if not exists:
                    os.rename(staging, t)
                elif (beside and cwd != t and t not in cwd.parents
                      and _link_others(t, staging, owned_old | set(names) | {MANIFEST})
                      and _exchange(staging, t)):
                    pass  # staging now holds the previous set; removed below
                else:
                    _commit_in_place(staging, t, names, owned_old)
                _fsync_dir(t.parent)
            finally:
                guard.active = False  # a signal now waits until the clean-up is done
                if staging is not None:
                    _remove(staging)
    except OSError as exc:
        where = f" ({exc.filename})" if getattr(exc, "filename", None) else ""
        raise OutputError(f"{what} {str(p)!r}: cannot write the result set: "
                          f"{exc.strerror or exc}{where}; the previous result set is "
                          f"unchanged") from None
    return [p / n for n in names] + [p / MANIFEST]


# --------------------------------------------------------------------------------------------
# the reader
# --------------------------------------------------------------------------------------------
def read_manifest(folder: str | Path, verify: bool = True) -> Manifest:
    """Read the manifest of the result set in ``folder``; refuse an incomplete set.

    The folder is opened once and every file is read relative to it, so that a set swapped in
    by another run while this one reads is seen whole (old or new; the read is repeated when
    the folder was exchanged under it).

    Parameters
    ----------
    folder : path
        A folder written by :func:`write_result_set` (``pipeopt run ... --out folder``).
    verify : bool
        Check the size and SHA-256 of every listed file (default True).

    Returns
    -------
    Manifest

    Raises
    ------
    IncompleteResultSet
        When the folder has no manifest, the manifest is not pipeopt's or says the set is
        incomplete (a run was stopped while replacing it), or a listed file is missing or
        differs from the size and SHA-256 recorded.
    """
    f = Path(folder)
    relative = os.open in os.supports_dir_fd and hasattr(os, "O_DIRECTORY")
    attempts = 50  # each repeat follows a swap by another run; they end when the runs do
    for attempt in range(attempts):
        fd = None
        if relative:
            try:
                fd = os.open(f, os.O_RDONLY | os.O_DIRECTORY)
            except FileNotFoundError:
                raise IncompleteResultSet(f"{str(f)!r}: no such folder") from None
            except OSError as exc:
                raise IncompleteResultSet(f"{str(f)!r}: cannot be read ({exc.strerror})") \
                    from None
        try:
            return _read_manifest_in(f, fd, verify)
        except IncompleteResultSet:
            if fd is None or attempt == attempts - 1:
                raise
            try:
                moved = os.stat(f).st_ino != os.fstat(fd).st_ino
            except OSError:
                moved = True
            if not moved:
                raise
            time.sleep(0.001 * attempt)
        finally:
            if fd is not None:
                os.close(fd)
    raise AssertionError("unreachable")  # pragma: no cover


def _read_manifest_in(f: Path, fd: int | None, verify: bool) -> Manifest:
    def path(name: str) -> str | Path:
        return name if fd is not None else f / name

    try:
        mfd = os.open(path(MANIFEST), os.O_RDONLY, dir_fd=fd)
        with os.fdopen(mfd, "rb") as fh:
            raw = fh.read(_MANIFEST_LIMIT + 1)
    except FileNotFoundError:
        raise IncompleteResultSet(f"{str(f)!r}: no {MANIFEST}; not a complete pipeopt result "
                                  f"set") from None
    except OSError as exc:
        raise IncompleteResultSet(f"{str(f)!r}: {MANIFEST} cannot be read "
                                  f"({exc.strerror})") from None
    try:
        if len(raw) > _MANIFEST_LIMIT:
            raise ValueError("too large")
        doc = json.loads(raw.decode("utf-8"))
        if not isinstance(doc, dict) or doc.get("format") != _FORMAT:
            raise ValueError("not a pipeopt manifest")
        files = {}
        for e in doc["files"]:
            name, size, digest = e["name"], e["size"], e["sha256"]
            if (not _valid_name(name) or not isinstance(size, int) or size < 0
                    or not re.fullmatch(r"[0-9a-f]{64}", str(digest)) or name in files):
                raise ValueError("bad entry")
            files[name] = (size, digest)
        complete = doc["complete"] is True
        version = str(doc.get("pipeopt_version", ""))
    except (ValueError, KeyError, TypeError, UnicodeDecodeError):
        raise IncompleteResultSet(f"{str(f)!r}: {MANIFEST} is not a valid pipeopt manifest") \
            from None
    if not complete:
        raise IncompleteResultSet(f"{str(f)!r}: the result set is incomplete (a run was "
                                  f"stopped while replacing it); run the study again with "
                                  f"--force")
    if verify:
        for name, (size, digest) in files.items():
            try:
                st = os.stat(path(name), dir_fd=fd, follow_symlinks=False)
                ok = stat.S_ISREG(st.st_mode) and st.st_size == size
                if ok:
                    h = hashlib.sha256()
                    with os.fdopen(os.open(path(name), os.O_RDONLY, dir_fd=fd), "rb") as fh:
                        for block in iter(lambda fh=fh: fh.read(1 << 20), b""):
                            h.update(block)
                    ok = h.hexdigest() == digest
            except OSError:
                raise IncompleteResultSet(f"{str(f)!r}: {name!r} of the result set is "
                                          f"missing") from None
            if not ok:
                raise IncompleteResultSet(f"{str(f)!r}: {name!r} differs from the file the "
                                          f"manifest records (size or SHA-256)")
    return Manifest(folder=f, pipeopt_version=version, files=files)
