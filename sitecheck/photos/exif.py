"""Read the capture time and position from a photo's EXIF.

EXIF is written by many devices and apps, and is often odd: missing tags, text where numbers
belong, zero denominators, dates of all zeros. A photo is evidence of the bearing whatever its
EXIF says, so these readers never raise: anything they cannot trust becomes None.
"""

from __future__ import annotations

import math
import re
from datetime import datetime
from typing import Any

from PIL import ExifTags, Image

__all__ = ["read_capture_time", "read_gps"]

_EXIF_DATE_FORMAT = "%Y:%m:%d %H:%M:%S"
_OFFSET = re.compile(r"[+-](?:0\d|1[0-4]):[0-5]\d")

# Tags of the Exif IFD that are not named in every Pillow version's ExifTags.Base.
_OFFSET_TIME = 0x9010
_OFFSET_TIME_ORIGINAL = 0x9011


def read_capture_time(exif: Image.Exif) -> str | None:
    """The moment the photo was taken, as ISO 8601, or None.

    DateTimeOriginal is when the shutter fired; DateTime is when a file was last written, which
    for an unedited phone photo is the same moment, so it is the fallback. The UTC offset is
    added only when the camera recorded one: without it the time is local to the camera, and
    we do not guess a zone.
    """
    try:
        exif_ifd = _as_dict(exif.get_ifd(ExifTags.IFD.Exif))
        candidates = (
            (exif_ifd.get(ExifTags.Base.DateTimeOriginal), exif_ifd.get(_OFFSET_TIME_ORIGINAL)),
            (exif.get(ExifTags.Base.DateTime), exif_ifd.get(_OFFSET_TIME)),
        )
        for value, offset in candidates:
            moment = _parse_exif_datetime(value)
            if moment is not None:
                offset_text = _text(offset)
                if offset_text is not None and _OFFSET.fullmatch(offset_text):
                    return moment.isoformat() + offset_text
                return moment.isoformat()
    except Exception:
        # Pillow parses EXIF lazily; a damaged IFD can raise almost anything here.
        return None
    return None


def read_gps(exif: Image.Exif) -> tuple[float, float] | None:
    """The position as (latitude, longitude) in decimal degrees, or None.

    Exactly (0, 0) is treated as absent: several devices write zeros when they have no fix, and
    no building site is in the Gulf of Guinea.
    """
    try:
        gps = _as_dict(exif.get_ifd(ExifTags.IFD.GPSInfo))
        lat = _signed_degrees(
            gps.get(ExifTags.GPS.GPSLatitude), gps.get(ExifTags.GPS.GPSLatitudeRef), "N", "S", 90
        )
        lon = _signed_degrees(
            gps.get(ExifTags.GPS.GPSLongitude), gps.get(ExifTags.GPS.GPSLongitudeRef), "E", "W", 180
        )
    except Exception:
        return None
    if lat is None or lon is None or (lat == 0 and lon == 0):
        return None
    return (round(lat, 7), round(lon, 7))


def _as_dict(value: Any) -> dict:
    return value if isinstance(value, dict) else {}


def _text(value: Any) -> str | None:
    if isinstance(value, bytes):
        value = value.decode("ascii", errors="replace")
    if not isinstance(value, str):
        return None
    return value.strip("\x00 \t\r\n")


def _parse_exif_datetime(value: Any) -> datetime | None:
    text = _text(value)
    if not text:
        return None
    try:
        return datetime.strptime(text[:19], _EXIF_DATE_FORMAT)
    except ValueError:
        return None


def _signed_degrees(
    value: Any, ref: Any, positive: str, negative: str, limit: float
) -> float | None:
    ref_text = _text(ref)
    if ref_text is None:
        return None
    ref_text = ref_text.upper()
    if ref_text not in (positive, negative):
        # Without the hemisphere the sign is a guess; a wrong sign is worse than no position.
        return None
    degrees = _degrees(value)
    if degrees is None or degrees > limit:
        return None
    return -degrees if ref_text == negative else degrees


def _degrees(value: Any) -> float | None:
    """Degrees from EXIF's (degrees, minutes, seconds); some writers give fewer parts."""
    if not isinstance(value, tuple | list) or not 1 <= len(value) <= 3:
        return None
    parts = [float(part) for part in value]
    if not all(math.isfinite(part) and part >= 0 for part in parts):
        return None
    if any(part >= 60 for part in parts[1:]):
        return None
    return sum(part / 60**index for index, part in enumerate(parts))
