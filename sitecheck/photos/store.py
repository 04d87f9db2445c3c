"""Photos on disk, named by the SHA-256 of their bytes.

A name derived from the content means no user ever chooses a path, the same photo sent twice
is stored once, and a file can be checked against its name after a backup is restored.
Files are fanned out by the first two hex digits so no directory grows past a few thousand
entries.

A photo's print copy (the small JPEG the site record embeds) lives apart, under `print/`,
named by the hash of the photo it was made from: it can be found from the photo's own name,
and remade from it if lost.
"""

from __future__ import annotations

import contextlib
import hashlib
import os
import re
import tempfile
import time
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path

__all__ = ["PhotoStore"]

_SHA256_HEX = re.compile(r"[0-9a-f]{64}")
_FANOUT = re.compile(r"[0-9a-f]{2}")
_SUFFIX = ".jpg"
_TEMP_PREFIX = ".incoming-"
_TEMP_SUFFIX = ".part"
_PRINT_DIR = "print"


@dataclass(frozen=True)
class PhotoStore:
    """Content-addressed photo files under `root`.

    Writes are atomic (temporary file in the same directory, fsync, rename), so a crash leaves
    either the whole photo or none of it under its final name, never a torn file. Fan-out
    directories are never removed: a concurrent `put` may be about to write into one.
    """

    root: Path

    def __post_init__(self) -> None:
        object.__setattr__(self, "root", Path(self.root))

    def path_for(self, sha: str) -> Path:
        """The file for `sha`; refuses anything but 64 lowercase hex digits, so no traversal."""
        if not isinstance(sha, str) or not _SHA256_HEX.fullmatch(sha):
            raise ValueError(
                f"A photo id must be a SHA-256 digest: 64 lowercase hex digits; got {sha!r:.80}."
            )
        return self.root / sha[:2] / f"{sha}{_SUFFIX}"

    def print_path_for(self, sha: str) -> Path:
        """The print copy of the photo `sha` (checked as in path_for)."""
        self.path_for(sha)
        return self.root / _PRINT_DIR / sha[:2] / f"{sha}{_SUFFIX}"

    def put(self, data: bytes) -> str:
        """Store `data` and return its SHA-256 hex; a second put of the same bytes writes nothing.

        A file already present with the wrong size (damaged outside our control) is replaced.
        """
        if not isinstance(data, bytes | bytearray | memoryview):
            raise TypeError(f"PhotoStore.put expects bytes; got {type(data).__name__}.")
        data = bytes(data)
        if not data:
            raise ValueError("PhotoStore.put refuses empty data; expected the bytes of a photo.")
        sha = hashlib.sha256(data).hexdigest()
        path = self.path_for(sha)
        with contextlib.suppress(FileNotFoundError):
            if path.stat().st_size == len(data):
                return sha
        path.parent.mkdir(parents=True, exist_ok=True)
        _write_atomically(path, data)
        return sha

    def put_print(self, sha: str, data: bytes) -> None:
        """Keep `data` as the print copy of the photo `sha`; the same bytes again write nothing.

        Not named by its own hash, so a copy of another size replaces the one there.
        """
        if not isinstance(data, bytes | bytearray | memoryview):
            raise TypeError(f"PhotoStore.put_print expects bytes; got {type(data).__name__}.")
        data = bytes(data)
        if not data:
            raise ValueError("PhotoStore.put_print refuses empty data; expected a JPEG.")
        path = self.print_path_for(sha)
        with contextlib.suppress(FileNotFoundError):
            if path.stat().st_size == len(data) and path.read_bytes() == data:
                return
        path.parent.mkdir(parents=True, exist_ok=True)
        _write_atomically(path, data)

    def open(self, sha: str) -> bytes:
        """The stored bytes; FileNotFoundError if there is no such photo."""
        return self.path_for(sha).read_bytes()

    def open_print(self, sha: str) -> bytes:
        """The print copy of the photo `sha`; FileNotFoundError if none was kept."""
        return self.print_path_for(sha).read_bytes()

    def exists(self, sha: str) -> bool:
        return self.path_for(sha).is_file()

    def verify(self, sha: str) -> bool:
        """Whether the file is present and its bytes still hash to its name (after a restore)."""
        try:
            data = self.open(sha)
        except FileNotFoundError:
            return False
        return hashlib.sha256(data).hexdigest() == sha

    def delete(self, sha: str) -> bool:
        """Remove an orphan photo and its print copy; True if the photo's file was removed."""
        path = self.path_for(sha)
        with contextlib.suppress(FileNotFoundError):
            self.print_path_for(sha).unlink()
        try:
            path.unlink()
        except FileNotFoundError:
            return False
        return True

    def iter_shas(self) -> Iterator[str]:
        """Every stored photo's SHA-256, in sorted order; stray files are skipped."""
        if not self.root.is_dir():
            return
        for directory in sorted(self.root.iterdir()):
            if not (_FANOUT.fullmatch(directory.name) and directory.is_dir()):
                continue
            for file in sorted(directory.iterdir()):
                sha = file.name.removesuffix(_SUFFIX)
                if (
                    file.name.endswith(_SUFFIX)
                    and _SHA256_HEX.fullmatch(sha)
                    and sha[:2] == directory.name
                    and file.is_file()
                ):
                    yield sha

    def iter_all_shas(self) -> Iterator[str]:
        """Every picture's SHA-256, and that of every print copy kept (a print copy can
        outlive its picture after a crash), each once."""
        yield from self.iter_shas()
        prints = self.root / _PRINT_DIR
        if not prints.is_dir():
            return
        for directory in sorted(prints.iterdir()):
            if not (_FANOUT.fullmatch(directory.name) and directory.is_dir()):
                continue
            for file in sorted(directory.iterdir()):
                sha = file.name.removesuffix(_SUFFIX)
                if (
                    file.name.endswith(_SUFFIX)
                    and _SHA256_HEX.fullmatch(sha)
                    and sha[:2] == directory.name
                    and not self.path_for(sha).is_file()
                ):
                    yield sha

    def remove_stale_temp_files(self, *, older_than_seconds: float = 3600.0) -> int:
        """Delete temporary files left by a crash mid-write; returns how many were removed.

        The age guard keeps it from removing a file that a running `put` is still writing.
        """
        if not self.root.is_dir():
            return 0
        cutoff = time.time() - older_than_seconds
        removed = 0
        pattern = f"??/{_TEMP_PREFIX}*{_TEMP_SUFFIX}"
        for temp in [*self.root.glob(pattern), *self.root.glob(f"{_PRINT_DIR}/{pattern}")]:
            with contextlib.suppress(FileNotFoundError):
                if temp.stat().st_mtime < cutoff:
                    temp.unlink()
                    removed += 1
        return removed


def _write_atomically(path: Path, data: bytes) -> None:
    descriptor, temp_name = tempfile.mkstemp(
        dir=path.parent, prefix=_TEMP_PREFIX, suffix=_TEMP_SUFFIX
    )
    try:
        with os.fdopen(descriptor, "wb") as file:
            file.write(data)
            file.flush()
            os.fsync(file.fileno())
        os.replace(temp_name, path)
    except BaseException:
        with contextlib.suppress(FileNotFoundError):
            os.unlink(temp_name)
        raise
    _fsync_directory(path.parent)


def _fsync_directory(directory: Path) -> None:
    """Make the rename itself durable; without it a power cut can undo a completed put."""
    if not hasattr(os, "O_DIRECTORY"):
        return
    descriptor = os.open(directory, os.O_RDONLY | os.O_DIRECTORY)
    try:
        os.fsync(descriptor)
    finally:
        os.close(descriptor)
