"""The print copy of a stored photo: the small JPEG the site record embeds as it is.

Uploads make it (ingest_photo); a photo stored before print copies existed gets one the
first time a record needs it, and keeps it, so each photo is decoded for print once.
"""

from __future__ import annotations

import contextlib

from .encode import encode_jpeg, fit_within
from .ingest import PhotoLimits, _resize, decode_photo, processing_slot
from .store import PhotoStore

__all__ = ["make_print_copy", "print_copy"]

_JPEG_START = b"\xff\xd8"
_JPEG_END = b"\xff\xd9"


def make_print_copy(
    display_jpeg: bytes,
    *,
    limits: PhotoLimits = PhotoLimits(),  # noqa: B008
) -> bytes:
    """A print-sized JPEG of a stored display picture.

    Goes through the checked decode, so a damaged or swapped file is PhotoRejected here
    rather than a broken picture in the PDF. A picture already small enough is returned as
    it is, as an upload would have kept it.
    """
    # Made in the background (a site record), so it waits its turn however long it takes.
    with processing_slot(wait_s=None):
        decoded = decode_photo(display_jpeg, limits=limits, draft_long_edge=limits.print_long_edge)
        # The file's own size, not the decoded one: a draft decode may already have shrunk it.
        stored_size = (decoded.original_width, decoded.original_height)
        if fit_within(stored_size, limits.print_long_edge) == stored_size:
            if decoded.original_format == "JPEG":
                return bytes(display_jpeg)
            return encode_jpeg(decoded.image, quality=limits.jpeg_quality)
        return encode_jpeg(
            _resize(decoded.image, limits.print_long_edge), quality=limits.jpeg_quality
        )


def print_copy(
    store: PhotoStore,
    sha: str,
    *,
    limits: PhotoLimits = PhotoLimits(),  # noqa: B008
) -> bytes:
    """The print copy of the photo `sha`, made from the display picture and kept if missing.

    FileNotFoundError if the photo itself is not in the store; PhotoRejected if its file
    no longer decodes. A copy cut short (a disk that filled, a restore gone wrong) is made
    again. A store that cannot be written (a read-only restore) still gets its copy, unkept.
    """
    with contextlib.suppress(FileNotFoundError):
        kept = store.open_print(sha)
        if kept.startswith(_JPEG_START) and kept.rstrip(b"\x00").endswith(_JPEG_END):
            return kept
    made = make_print_copy(store.open(sha), limits=limits)
    with contextlib.suppress(OSError):
        store.put_print(sha, made)
    return made
