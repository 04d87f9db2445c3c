"""Burn a caption under a photo for printed reports.

A printed page can lose its layout, be cut up or be copied into another document; a caption
that is part of the picture keeps the bearing reference and time attached to the photo.
"""

from __future__ import annotations

import re
import unicodedata

from PIL import Image, ImageDraw, ImageFont

from .encode import DEFAULT_JPEG_QUALITY, encode_jpeg
from .ingest import PhotoLimits, decode_photo

__all__ = ["stamp_caption"]

_MAX_CAPTION_CHARS = 200
_WHITESPACE = re.compile(r"\s+")


def stamp_caption(
    jpeg_bytes: bytes,
    text: str,
    *,
    quality: int = DEFAULT_JPEG_QUALITY,
    limits: PhotoLimits = PhotoLimits(),  # noqa: B008
) -> bytes:
    """The photo with a white strip underneath holding `text` in black, as a new JPEG.

    The input goes through the same checked decode as an upload, so a stored file that was
    damaged or swapped fails as PhotoRejected rather than somewhere inside Pillow. Text too
    wide for the picture is cut with "...".
    """
    caption = _clean(text)
    if not caption:
        raise ValueError(
            "The caption is empty; expected a short text such as the bearing reference and time."
        )
    picture = decode_photo(jpeg_bytes, limits=limits).image
    width, height = picture.size
    font_size = max(10, min(48, round(width / 45)))
    font = ImageFont.load_default(size=font_size)
    margin = max(4, font_size // 2)
    strip = font_size + 2 * margin
    caption = _fit(caption, font, width - 2 * margin)

    stamped = Image.new("RGB", (width, height + strip), (255, 255, 255))
    stamped.paste(picture, (0, 0))
    draw = ImageDraw.Draw(stamped)
    draw.text((margin, height + strip / 2), caption, fill=(0, 0, 0), font=font, anchor="lm")
    return encode_jpeg(stamped, quality=quality)


def _clean(text: str) -> str:
    """One line of printable text: control and format characters (e.g. bidi overrides) removed."""
    if not isinstance(text, str):
        raise TypeError(f"The caption must be text; got {type(text).__name__}.")
    kept = "".join(
        " " if unicodedata.category(char)[0] in ("C", "Z") else char
        for char in text[: _MAX_CAPTION_CHARS * 2]
    )
    return _WHITESPACE.sub(" ", kept).strip()[:_MAX_CAPTION_CHARS]


def _fit(text: str, font: ImageFont.FreeTypeFont | ImageFont.ImageFont, width: int) -> str:
    if font.getlength(text) <= width:
        return text
    ellipsis = "..."
    while text and font.getlength(text + ellipsis) > width:
        text = text[:-1]
    return text.rstrip() + ellipsis if text else ""
