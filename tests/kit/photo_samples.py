"""Pictures for the photo tests, built in code so the repository holds no binary fixtures.

Every position, time and payload here is invented for tests.
"""

from __future__ import annotations

import io
import random
import struct
import zlib
from datetime import datetime

from PIL import Image, ImageChops

EXIF_IFD = 0x8769
GPS_IFD = 0x8825
ORIENTATION = 0x0112
DATETIME = 0x0132
DATETIME_ORIGINAL = 0x9003
OFFSET_TIME_ORIGINAL = 0x9011

# JPEG markers that carry metadata rather than picture: APP1 (EXIF, XMP), APP2 (ICC),
# APP13 (Photoshop/IPTC), COM (comment).
METADATA_MARKERS = {0xE1: "APP1", 0xE2: "APP2", 0xED: "APP13", 0xFE: "COM"}


def make_test_jpeg(
    width: int,
    height: int,
    *,
    orientation: int | None = None,
    capture_time: datetime | None = None,
    gps: tuple[float, float] | None = None,
    quality: int = 85,
    comment: bytes | None = None,
) -> bytes:
    """A real JPEG whose left half is red and right half blue, with the EXIF asked for.

    The two halves let a test see which way the picture was turned.
    """
    image = Image.new("RGB", (width, height), (200, 30, 30))
    image.paste((30, 30, 200), (width // 2, 0, width, height))
    exif = Image.Exif()
    if orientation is not None:
        exif[ORIENTATION] = orientation
    if capture_time is not None:
        exif.get_ifd(EXIF_IFD)[DATETIME_ORIGINAL] = capture_time.strftime("%Y:%m:%d %H:%M:%S")
    if gps is not None:
        exif.get_ifd(GPS_IFD).update(gps_ifd(*gps))
    options: dict = {"quality": quality}
    if len(exif) or exif.get_ifd(EXIF_IFD) or exif.get_ifd(GPS_IFD):
        options["exif"] = exif
    if comment is not None:
        options["comment"] = comment
    buffer = io.BytesIO()
    image.save(buffer, "JPEG", **options)
    return buffer.getvalue()


def gps_ifd(latitude: float, longitude: float) -> dict:
    """The GPS IFD entries for a position, as degrees, minutes and seconds like a camera."""
    return {
        1: "N" if latitude >= 0 else "S",
        2: _dms(abs(latitude)),
        3: "E" if longitude >= 0 else "W",
        4: _dms(abs(longitude)),
    }


def _dms(value: float) -> tuple[float, float, float]:
    degrees = int(value)
    minutes = int((value - degrees) * 60)
    seconds = round((value - degrees - minutes / 60) * 3600, 4)
    return (float(degrees), float(minutes), seconds)


def jpeg_with_exif(width: int, height: int, exif: Image.Exif | bytes) -> bytes:
    """A JPEG carrying the given EXIF, well formed or not."""
    buffer = io.BytesIO()
    Image.new("RGB", (width, height), (90, 120, 90)).save(buffer, "JPEG", exif=exif)
    return buffer.getvalue()


def exif_with_text_coordinates() -> bytes:
    """EXIF whose GPS IFD holds text where the coordinates' numbers belong.

    Written by hand because Pillow insists on the right type when it writes a known tag.
    """

    def entry(tag: int, kind: int, count: int, value: bytes) -> bytes:
        return struct.pack("<HHI", tag, kind, count) + value.ljust(4, b"\x00")

    ascii_type, long_type = 2, 4
    gps_offset = 8 + 2 + 12 + 4
    data_offset = gps_offset + 2 + 4 * 12 + 4
    ifd0 = struct.pack("<H", 1) + entry(GPS_IFD, long_type, 1, struct.pack("<I", gps_offset))
    gps = (
        struct.pack("<H", 4)
        + entry(1, ascii_type, 2, b"N")
        + entry(2, ascii_type, 10, struct.pack("<I", data_offset))
        + entry(3, ascii_type, 2, b"W")
        + entry(4, ascii_type, 5, struct.pack("<I", data_offset + 10))
        + struct.pack("<I", 0)
    )
    tiff = b"II*\x00" + struct.pack("<I", 8) + ifd0 + struct.pack("<I", 0) + gps
    assert len(tiff) == data_offset
    return b"Exif\x00\x00" + tiff + b"fifty-one\x00" + b"zero\x00"


def make_camera_like_jpeg(
    width: int, height: int, *, quality: int = 92, noise_sigma: float = 10
) -> bytes:
    """Noise over gradients, so it compresses about as a real site photo does.

    At 4000 x 3000 and quality 92 the default noise gives about 4 MB, like a 12 MP phone photo.
    """
    vertical = Image.linear_gradient("L").resize((width, height))
    horizontal = (
        Image.linear_gradient("L").transpose(Image.Transpose.ROTATE_90).resize((width, height))
    )
    noise = Image.effect_noise((width, height), noise_sigma)
    red = ImageChops.add(horizontal, noise, scale=1.0, offset=-100)
    green = ImageChops.add(vertical, noise, scale=1.0, offset=-80)
    blue = ImageChops.blend(horizontal, vertical, 0.5)
    buffer = io.BytesIO()
    Image.merge("RGB", (red, green, blue)).save(buffer, "JPEG", quality=quality)
    return buffer.getvalue()


def make_wall_photo(width: int, height: int, *, seed: int = 3, quality: int = 85) -> bytes:
    """An invented photo of a block wall as the phone sends it: blocks of uneven shade with
    pits, mortar joints, light falling off across the picture, a lens's softness and a
    little sensor noise. Edges, texture and noise, so that how a picture is shrunk shows."""
    from PIL import ImageDraw, ImageFilter

    rng = random.Random(seed)
    wall = Image.new("RGB", (width, height), (92, 88, 84))
    draw = ImageDraw.Draw(wall)
    course, block = max(8, height // 10), max(16, width // 8)
    for row, y in enumerate(range(0, height, course + 3)):
        shift = block // 2 if row % 2 else 0
        for x in range(-shift, width, block + 3):
            shade = rng.randint(-28, 28)
            base = (168 + shade, 160 + shade, 150 + shade)
            draw.rectangle((x, y, x + block, y + course), fill=base)
            for _ in range(12):
                px, py, r = x + rng.randint(0, block), y + rng.randint(0, course), rng.randint(1, 6)
                tone = rng.randint(-40, 20)
                draw.ellipse((px - r, py - r, px + r, py + r), fill=tuple(c + tone for c in base))
    light = (
        Image.linear_gradient("L").rotate(90).resize((width, height)).point(lambda v: 255 - v // 3)
    )
    wall = ImageChops.multiply(wall, Image.merge("RGB", (light, light, light)))
    wall = wall.filter(ImageFilter.GaussianBlur(0.8))
    noise = Image.merge("RGB", [Image.effect_noise((width, height), 6 + c) for c in range(3)])
    wall = ImageChops.add(wall, noise, scale=1.0, offset=-128)
    return encode(wall, "JPEG", quality=quality)


def encode(image: Image.Image, format: str, **options) -> bytes:
    buffer = io.BytesIO()
    image.save(buffer, format, **options)
    return buffer.getvalue()


def flood_png(width: int, height: int) -> bytes:
    """A valid one-colour 1-bit PNG of any size, a few kilobytes even at 20000 x 20000.

    Written by hand because Pillow would need the whole picture in memory to save it.
    """
    row = b"\x00" + bytes((width + 7) // 8)
    compressor = zlib.compressobj(9)
    chunks = []
    block = row * max(1, 4_000_000 // len(row))
    rows_per_block = len(block) // len(row)
    remaining = height
    while remaining > 0:
        count = min(rows_per_block, remaining)
        chunks.append(compressor.compress(block[: count * len(row)]))
        remaining -= count
    chunks.append(compressor.flush())
    header = struct.pack(">IIBBBBB", width, height, 1, 0, 0, 0, 0)
    return (
        b"\x89PNG\r\n\x1a\n"
        + _png_chunk(b"IHDR", header)
        + _png_chunk(b"IDAT", b"".join(chunks))
        + _png_chunk(b"IEND", b"")
    )


def _png_chunk(kind: bytes, body: bytes) -> bytes:
    return (
        struct.pack(">I", len(body))
        + kind
        + body
        + struct.pack(">I", zlib.crc32(kind + body) & 0xFFFFFFFF)
    )


def with_declared_size(jpeg: bytes, width: int, height: int) -> bytes:
    """The JPEG with its frame header claiming another size: a tiny file, a huge picture."""
    position = 2
    while position < len(jpeg):
        marker = jpeg[position + 1]
        length = struct.unpack(">H", jpeg[position + 2 : position + 4])[0]
        if marker in (0xC0, 0xC1, 0xC2):
            start = position + 5  # after marker, length and precision
            return jpeg[:start] + struct.pack(">HH", height, width) + jpeg[start + 4 :]
        position += 2 + length
    raise ValueError("no frame header found")


def jpeg_markers(jpeg: bytes) -> tuple[list[int], int]:
    """Every segment marker in the file, and the number of bytes after the end marker."""
    assert jpeg[:2] == b"\xff\xd8", "not a JPEG"
    markers = [0xD8]
    position = 2
    while position < len(jpeg):
        assert jpeg[position] == 0xFF, f"lost sync at byte {position}"
        marker = jpeg[position + 1]
        markers.append(marker)
        if marker == 0xD9:
            return markers, len(jpeg) - position - 2
        length = struct.unpack(">H", jpeg[position + 2 : position + 4])[0]
        position += 2 + length
        if marker == 0xDA:  # entropy-coded data runs to the next marker that is not a restart
            while True:
                position = jpeg.index(b"\xff", position)
                following = jpeg[position + 1]
                if following == 0x00 or 0xD0 <= following <= 0xD7:
                    position += 2
                    continue
                break
    raise AssertionError("no end-of-image marker")


def noisy_jpeg(seed: int, width: int = 640, height: int = 480, quality: int = 85) -> bytes:
    """A real JPEG of seeded noise: each seed a different picture, and large for its size as
    a site photo is (640 × 480 at quality 85 is about 300 KB)."""
    rng = random.Random(seed)
    image = Image.frombytes("RGB", (width, height), rng.randbytes(width * height * 3))
    buffer = io.BytesIO()
    image.save(buffer, "JPEG", quality=quality)
    return buffer.getvalue()
