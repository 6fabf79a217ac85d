"""Every file embedcheck reads or writes passes through here.

Reading (`read_input`): one place that refuses what is not a small text file (a folder,
a device such as /dev/zero, a file over the size limit, binary content) with a one-line
`InputError`, and records every file read, so that no report can later overwrite it.

Writing (`Outputs`): the files a command will write are claimed before any work is done.
A claim is refused when the path is an input (same resolved path or same inode), another
claimed output, an existing folder, in a folder that is missing or not writable, or (for
options that must not overwrite) an existing file. `Outputs.commit` writes every file to
a temporary sibling first and renames them only when all were written: a run that fails
leaves nothing behind.

    >>> import tempfile, pathlib
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> (folder / "chip.yaml").write_text("embedcheck_chip: 1\\n")
    19
    >>> _ = read_input(folder / "chip.yaml")
    >>> out = Outputs()
    >>> out.claim(folder / "chip.yaml", option="--json")
    Traceback (most recent call last):
    ...
    embedcheck.errors.InputError: ...chip.yaml: --json: will not write over an input file
"""
from __future__ import annotations

import json
import os
import stat
import tempfile
from pathlib import Path
from typing import Iterable, Mapping

from ..errors import InputError
from .limits import MAX_FILE_MB, max_file_bytes

__all__ = ["MAX_FILE_BYTES", "Outputs", "forget_inputs", "inputs_read", "max_file_bytes",
           "read_input", "read_json"]

MAX_FILE_BYTES = MAX_FILE_MB * 1024 * 1024    # default; EMBEDCHECK_MAX_FILE_MB overrides
_READ: dict[str, tuple[int, int, bool] | None] = {}   # resolved path -> (device, inode, folder?)


def read_input(path: str | Path, *, what: str = "file") -> str:
    """The UTF-8 text of a small regular file, recorded as an input of this run.

    Refused, each with a one-line `InputError` naming the file: a missing path, a folder,
    anything that is not a regular file (devices, pipes), a file above `max_file_bytes()`,
    binary content (a NUL byte) and text that is not UTF-8.
    """
    file = str(path)
    limit = max_file_bytes()
    try:
        info = os.stat(path)
    except FileNotFoundError:
        raise InputError(f"{what} not found", file=file) from None
    except OSError as exc:
        raise InputError(f"cannot read {what}: {exc.strerror or exc}", file=file) from None
    if stat.S_ISDIR(info.st_mode):
        raise InputError(f"is a folder, not a {what}", file=file)
    if not stat.S_ISREG(info.st_mode):
        raise InputError(f"is not a regular file (a device, pipe or socket); give a {what}",
                         file=file)
    if info.st_size > limit:
        raise InputError(f"{what} is {info.st_size / 1048576:.1f} MB, above the limit of "
                         f"{limit / 1048576:g} MB (set EMBEDCHECK_MAX_FILE_MB to raise it)",
                         file=file)
    try:
        with open(path, "rb") as handle:
            data = handle.read(limit + 1)
    except OSError as exc:
        raise InputError(f"cannot read {what}: {exc.strerror or exc}", file=file) from None
    if len(data) > limit:                      # grew while we looked
        raise InputError(f"{what} is above the limit of {limit / 1048576:g} MB "
                         "(set EMBEDCHECK_MAX_FILE_MB to raise it)", file=file)
    if b"\0" in data:
        raise InputError(f"binary content (a NUL byte): not a text {what}", file=file)
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise InputError(f"not UTF-8 text (byte {exc.start})", file=file) from None
    if text.startswith("\ufeff"):             # a byte-order mark some editors write
        text = text[1:]
    _READ[_resolved(path)] = (info.st_dev, info.st_ino, False)
    return text


def read_json(path: str | Path, *, what: str = "file"):
    """The JSON value of a small text file (see `read_input`), or a one-line `InputError`
    naming the line (never the text: a parser message quotes none)."""
    text = read_input(path, what=what)
    try:
        return json.loads(text)
    except json.JSONDecodeError as exc:
        raise InputError(f"{what} is not JSON: {exc.msg}", file=str(path),
                         line=exc.lineno) from None
    except (ValueError, RecursionError):      # a 5000-digit number, lists 10^5 deep
        raise InputError(f"{what} is not JSON we can read: a number too long or lists "
                         "nested too deeply", file=str(path)) from None


def note_input(path: str | Path) -> None:
    """Record a path (a folder of snapshots, say) as an input of this run."""
    try:
        info = os.stat(path)
        _READ[_resolved(path)] = (info.st_dev, info.st_ino, stat.S_ISDIR(info.st_mode))
    except OSError:
        _READ[_resolved(path)] = None


def inputs_read() -> dict[str, tuple[int, int, bool] | None]:
    """Every file read so far in this run (resolved path -> (device, inode))."""
    return dict(_READ)


def forget_inputs() -> None:
    """Start a new run: forget the files read so far (the command line calls this)."""
    _READ.clear()


def _exists(option: str, force_option: str | None) -> str:
    how = (f"add {force_option} to replace it" if force_option
           else "give another path, or move the file away first")
    return f"{option}: file exists; will not overwrite it ({how})"


class Outputs:
    """The files one command writes: claimed up front, written all or nothing."""

    def __init__(self, inputs: Iterable[str | Path] = ()) -> None:
        for path in inputs:
            if path is not None:
                note_input(path)
        self._claims: dict[str, tuple[Path, str, bool, str | None]] = {}

    def claim(self, path: str | Path, *, option: str, overwrite: bool = True,
              force_option: str | None = None) -> Path:
        """Reserve `path` for writing, or raise `InputError` naming the option and why.
        `overwrite=False` keeps an existing file; `force_option` names the option that
        would replace it (said in the message only when the command has one)."""
        target = self.vet(path, option=option, overwrite=overwrite, force_option=force_option)
        self._claims[_resolved(target)] = (target, option, overwrite, force_option)
        return target

    def vet(self, path: str | Path, *, option: str, overwrite: bool = True,
            force_option: str | None = None) -> Path:
        """Check `path` as `claim` does, without reserving it (for a file another writer,
        such as SQLite, updates in place)."""
        target = Path(path)
        file = str(path)
        if not target.name or target.name in (".", ".."):
            raise InputError(f"{option}: give a file name, not a folder", file=file)
        key = _resolved(target)
        if key in self._claims:
            raise InputError(f"{option}: the same file as {self._claims[key][1]}; give each "
                             "output its own path", file=file)
        self._check_not_input(target, key, option)
        folder = target.parent if str(target.parent) else Path(".")
        if not folder.is_dir():
            raise InputError(f"{option}: folder '{folder}' does not exist", file=file)
        if target.exists() or target.is_symlink():
            if target.is_dir():
                raise InputError(f"{option}: is a folder; give a file name", file=file)
            if not target.is_file():
                raise InputError(f"{option}: is not a regular file; will not write to it",
                                 file=file)
            if not overwrite:
                raise InputError(_exists(option, force_option), file=file)
        _probe(folder, file, option)
        return target

    def vet_database(self, path: str | Path, *, option: str) -> Path:
        """`vet` for an SQLite file updated in place (sweep results, forecast samples): it
        must not be an input, its folder must be writable, and a file already there must
        be an SQLite database (anything else is refused, never written over)."""
        target = self.vet(path, option=option)
        if target.exists():
            with open(target, "rb") as handle:
                head = handle.read(16)
            if head and head != b"SQLite format 3\0":
                raise InputError(f"{option}: is not an SQLite database; will not write to it",
                                 file=str(path))
        return target

    def claimed(self) -> list[Path]:
        """The claimed paths, in claim order."""
        return [claim[0] for claim in self._claims.values()]

    def commit(self, contents: Mapping[str | Path, str | bytes]) -> None:
        """Write every claimed file given in `contents`, all or nothing.

        Each file goes to a temporary sibling first; only when every one is written are
        they renamed into place. Inputs read since the claims are checked again, so a
        file first read after the claim (a circuit file a patch names) is safe too.
        """
        staged: list[tuple[str, Path]] = []
        try:
            for path, data in contents.items():
                key = _resolved(Path(path))
                if key not in self._claims:
                    raise RuntimeError(f"output '{path}' was not claimed before writing")
                target, option, overwrite, force_option = self._claims[key]
                self._check_not_input(target, key, option)
                if not overwrite and target.exists():
                    raise InputError(_exists(option, force_option), file=str(target))
                raw = data.encode("utf-8") if isinstance(data, str) else data
                staged.append((_stage(target, raw, option), target))
        except BaseException:
            for tmp, _ in staged:
                _unlink(tmp)
            raise
        for tmp, target in staged:
            os.replace(tmp, target)

    def _check_not_input(self, target: Path, key: str, option: str) -> None:
        try:
            info = os.stat(target)
            inode: tuple[int, int] | None = (info.st_dev, info.st_ino)
        except OSError:
            inode = None
        for path, known in _READ.items():
            if path == key or (inode is not None and known is not None
                               and known[:2] == inode):
                raise InputError(f"{option}: will not write over an input file", file=str(target))
            if known is not None and known[2] and _inside(key, path):
                raise InputError(f"{option}: will not write into an input folder (a folder "
                                 "of chip snapshots)", file=str(target))


def _resolved(path: str | Path) -> str:
    return str(Path(os.path.abspath(path)).resolve())


def _inside(key: str, folder: str) -> bool:
    return key.startswith(folder.rstrip(os.sep) + os.sep)


def _probe(folder: Path, file: str, option: str) -> None:
    """Create and remove a temporary file in `folder`: the only honest writability test."""
    try:
        fd, tmp = tempfile.mkstemp(prefix=".embedcheck-probe.", dir=folder)
    except OSError as exc:
        raise InputError(f"{option}: cannot write in folder '{folder}': "
                         f"{exc.strerror or exc}", file=file) from None
    os.close(fd)
    _unlink(tmp)


def _stage(target: Path, data: bytes, option: str) -> str:
    folder = target.parent if str(target.parent) else Path(".")
    try:
        fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", dir=folder)
    except OSError as exc:
        raise InputError(f"{option}: cannot write: {exc.strerror or exc}",
                         file=str(target)) from None
    try:
        with os.fdopen(fd, "wb") as out:
            out.write(data)
        umask = os.umask(0)
        os.umask(umask)
        os.chmod(tmp, 0o666 & ~umask)          # mkstemp makes 0600; files are the user's
    except OSError as exc:
        _unlink(tmp)
        raise InputError(f"{option}: cannot write: {exc.strerror or exc}",
                         file=str(target)) from None
    return tmp


def _unlink(path: str) -> None:
    try:
        os.unlink(path)
    except OSError:
        pass
