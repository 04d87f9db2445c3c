"""Bearing photos: check an upload, stand it upright, strip it, size it, store it by content.

A pure library (Pillow and the standard library only): the web layer hands it bytes and
stores the facts it returns; it knows nothing of Flask or the database.
"""

from .encode import encode_jpeg
from .exif import read_capture_time, read_gps
from .ingest import (
    ALLOWED_FORMATS,
    DecodedPhoto,
    IngestedPhoto,
    PhotoLimits,
    PhotoRejected,
    PhotosBusy,
    decode_photo,
    ingest_photo,
    processing_slot,
    return_picture_memory_to_the_system,
)
from .printcopy import make_print_copy, print_copy
from .stamp import stamp_caption
from .store import PhotoStore

__all__ = [
    "ALLOWED_FORMATS",
    "DecodedPhoto",
    "IngestedPhoto",
    "PhotoLimits",
    "PhotoRejected",
    "PhotoStore",
    "PhotosBusy",
    "decode_photo",
    "encode_jpeg",
    "ingest_photo",
    "make_print_copy",
    "print_copy",
    "processing_slot",
    "return_picture_memory_to_the_system",
    "read_capture_time",
    "read_gps",
    "stamp_caption",
]
