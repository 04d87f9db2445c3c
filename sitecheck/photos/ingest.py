"""Accept an uploaded bearing photo, or refuse it with a reason the inspector can act on.

An upload is untrusted bytes. Image decoders are a steady source of security bugs, so we
decode only three formats, bound the work before decoding (bytes, then pixels), and never keep
the upload itself: what we store is a fresh JPEG of the pixels, upright, without metadata.
"""

from __future__ import annotations

import contextlib
import ctypes
import hashlib
import io
import math
import os
import re
import struct
import threading
import warnings
from dataclasses import dataclass
from typing import Any

from PIL import Image, ImageCms, ImageOps, UnidentifiedImageError

from .encode import DEFAULT_JPEG_QUALITY, encode_jpeg, fit_within
from .exif import read_capture_time, read_gps

__all__ = [
    "ALLOWED_FORMATS",
    "IngestedPhoto",
    "PhotoLimits",
    "PhotoRejected",
    "PhotosBusy",
    "decode_photo",
    "ingest_photo",
    "processing_slot",
    "return_picture_memory_to_the_system",
]

ALLOWED_FORMATS = ("JPEG", "PNG", "WEBP")

# Pillow's errors for malformed input are not all UnidentifiedImageError (ValueError,
# SyntaxError, struct.error and others escape from some plugins), so the decode maps all of
# these to a rejection. Anything else is a bug of ours and is left to surface.
_DECODE_ERRORS: tuple[type[BaseException], ...] = (
    OSError,
    ValueError,
    SyntaxError,
    EOFError,
    IndexError,
    KeyError,
    TypeError,
    ZeroDivisionError,
    struct.error,
)
# A colour profile that cannot be read or applied, as well as a damaged picture.
_PROFILE_ERRORS: tuple[type[BaseException], ...] = (ImageCms.PyCMSError, *_DECODE_ERRORS)

_FORMATS_TEXT = "JPEG, PNG or WebP"
_BOMB_PIXELS = re.compile(r"\((\d+) pixels\)")
_SIXTEEN_BIT_MODES = ("I;16", "I;16L", "I;16B", "I;16N", "I")
_WHITE = (255, 255, 255)

# Decoded whole, never at a reduced size: the whole picture is in memory at once.
_FULL_DECODE_FORMATS = ("PNG", "WEBP")
# Rows of a large picture converted at a time on the way to its reduced copy.
_STRIP_ROWS = 256
# How an EXIF orientation turns a picture upright (the table ImageOps.exif_transpose uses).
_UPRIGHT = {
    2: Image.Transpose.FLIP_LEFT_RIGHT,
    3: Image.Transpose.ROTATE_180,
    4: Image.Transpose.FLIP_TOP_BOTTOM,
    5: Image.Transpose.TRANSPOSE,
    6: Image.Transpose.ROTATE_270,
    7: Image.Transpose.TRANSVERSE,
    8: Image.Transpose.ROTATE_90,
}
_ORIENTATION = 0x0112

# One decode at a time per process. `warnings.catch_warnings` swaps process-wide state on
# Python < 3.14, and two overlapping blocks in different threads can restore each other's
# filters and leave "ignore" installed for good; the lock stops our own calls overlapping.
# It also bounds memory: only one full-size picture is in memory at once.
_DECODE_LOCK = threading.Lock()

# Magic numbers of picture formats we refuse, only to name them in the message. These files
# are never handed to a decoder.
_REFUSED_SIGNATURES: tuple[tuple[bytes, str], ...] = (
    (b"GIF87a", "GIF"),
    (b"GIF89a", "GIF"),
    (b"BM", "BMP"),
    (b"II*\x00", "TIFF or camera raw"),
    (b"MM\x00*", "TIFF or camera raw"),
    (b"8BPS", "Photoshop"),
    (b"%PDF", "PDF"),
    (b"%!PS", "PostScript"),
    (b"\xc5\xd0\xd3\xc6", "PostScript"),
    (b"SIMPLE  =", "FITS"),
    (b"\x00\x00\x00\x0cjP  ", "JPEG 2000"),
    (b"\xffO\xffQ", "JPEG 2000"),
    (b"\x00\x00\x01\x00", "Windows icon"),
    (b"qoif", "QOI"),
)
_HEIF_BRANDS = {b"heic", b"heix", b"hevc", b"hevx", b"heim", b"heis", b"mif1", b"msf1"}
_AVIF_BRANDS = {b"avif", b"avis"}
_ALLOWED_SIGNATURES = (b"\xff\xd8\xff", b"\x89PNG\r\n\x1a\n")


class PhotosBusy(Exception):
    """Every processing slot is taken and enough uploads already wait for one; the upload
    was not looked at. Not a refusal: the same photo, sent again after ``retry_after_s``
    seconds, is accepted as usual."""

    def __init__(self, retry_after_s: int):
        self.retry_after_s = retry_after_s
        self.message = (
            "The server is busy with other photos just now; nothing was stored. The photo "
            f"is kept on the phone and sent again in about {retry_after_s} seconds."
        )
        super().__init__(self.message)


class _Slots:
    """At most one picture processed per core at once; a few more wait their turn.

    A decoded picture is the largest thing the server holds (tens of MB), and decoding is
    the longest work it does; several at once only share the same cores more slowly while
    their memory adds up. Those that cannot start at once wait, up to ``waiting`` of them:
    beyond that, or after ``wait_s``, an upload is told to come back (PhotosBusy), so a burst
    of uploads never holds every server thread and log-in and pages still answer.
    """

    def __init__(self, slots: int, waiting: int):
        self.slots = slots
        self.waiting_limit = waiting
        self._busy = 0
        self._waiting = 0
        self._changed = threading.Condition()

    @contextlib.contextmanager
    def hold(self, wait_s: float | None):
        with self._changed:
            if self._busy >= self.slots:
                if wait_s is not None and self._waiting >= self.waiting_limit:
                    raise PhotosBusy(_RETRY_AFTER_S)
                self._waiting += 1
                try:
                    free = self._changed.wait_for(lambda: self._busy < self.slots, wait_s)
                finally:
                    self._waiting -= 1
                if not free:
                    raise PhotosBusy(_RETRY_AFTER_S)
            self._busy += 1
        try:
            yield
        finally:
            with self._changed:
                self._busy -= 1
                self._changed.notify()


def _cores() -> int:
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:  # not Linux
        return max(1, os.cpu_count() or 1)


_RETRY_AFTER_S = 30
# How long an upload waits for a slot before it is told to come back.
WAIT_FOR_SLOT_S = 20.0
_SLOTS = _Slots(_cores(), waiting=2 * _cores())


def share_cores_with(processes: int) -> int:
    """Take this process's share of the cores when ``processes`` server processes run on one
    machine (``sitecheck serve``'s workers), so that the machine as a whole still works on one
    picture per core; returns the slots this process now has (at least one).

    Only the work is shared: as many uploads as before may wait in each process, since a
    waiting upload holds its bytes but no decoded picture, and a worker told to refuse
    sooner would send phones away while the other worker's slot frees up.
    """
    global _SLOTS
    share = max(1, _cores() // max(1, processes))
    _SLOTS = _Slots(share, waiting=2 * _cores())
    return share


def processing_slot(wait_s: float | None = WAIT_FOR_SLOT_S):
    """Hold one of the process's picture slots while decoding or resizing a picture.

    ``wait_s=None`` waits as long as it takes (work in the background, such as a site
    record's print copies); otherwise PhotosBusy when too many already wait or none frees
    within ``wait_s`` seconds.
    """
    return _SLOTS.hold(wait_s)


def return_picture_memory_to_the_system() -> bool:
    """Let the memory of a decoded picture go back to the system once it is freed.

    Pillow holds a picture in 16 MB blocks. glibc's malloc serves such a block from mmap
    and returns it on free, but raises its threshold for mmap after each free, so later
    blocks come from the heap, which it keeps: a server that decoded a few large pictures
    stayed hundreds of MB larger for good. A fixed threshold (which also turns the raising
    off) keeps every block on mmap. True if set (glibc only; elsewhere nothing changes).
    """
    try:
        libc = ctypes.CDLL("libc.so.6")
    except OSError:
        return False
    return bool(libc.mallopt(_M_MMAP_THRESHOLD, 256 * 1024))


_M_MMAP_THRESHOLD = -3  # glibc's malloc.h


class PhotoRejected(Exception):
    """The upload is not a photo we accept; `message` says why in the inspector's words.

    `code` is a stable slug for programs (the web layer maps it to an HTTP status):
    too-large, too-many-pixels, not-an-image, format-not-allowed, damaged.
    """

    def __init__(self, code: str, message: str) -> None:
        super().__init__(message)
        self.code = code
        self.message = message

    def __repr__(self) -> str:
        return f"PhotoRejected({self.code!r}, {self.message!r})"


@dataclass(frozen=True)
class PhotoLimits:
    """Bounds on the work one upload may cost, and the sizes we keep.

    50 megapixels admits a 48 MP phone photo and stays below Pillow's own bomb threshold
    (about 89 MP), so our message, not Pillow's, is what an inspector normally sees. A JPEG
    that large is decoded at a reduced size (1/2 to 1/8), so it never costs its full size in
    memory. PNG and WebP cannot be: they are decoded whole, up to 4 bytes a pixel, so their
    limit is lower. 24 megapixels is above any phone screenshot or camera PNG in use and
    keeps one decode under 100 MB; a 0.16 MB PNG of 7000 x 7000 pixels (49 MP) is refused
    before any pixel is decoded.
    """

    max_bytes: int = 15_000_000
    max_pixels: int = 50_000_000
    max_full_decode_pixels: int = 24_000_000
    display_long_edge: int = 1600
    thumbnail_long_edge: int = 320
    # The site record prints each photo 56 mm wide: a 3:4 upright photo at 448 px is then
    # 336 px across, about 150 dpi, and a landscape one sharper still.
    print_long_edge: int = 448
    jpeg_quality: int = DEFAULT_JPEG_QUALITY

    def __post_init__(self) -> None:
        for name in (
            "max_bytes",
            "max_pixels",
            "max_full_decode_pixels",
            "display_long_edge",
            "thumbnail_long_edge",
            "print_long_edge",
        ):
            value = getattr(self, name)
            if isinstance(value, bool) or not isinstance(value, int) or value < 1:
                raise ValueError(f"PhotoLimits.{name} must be a positive integer; got {value!r}.")
        quality = self.jpeg_quality
        if isinstance(quality, bool) or not isinstance(quality, int) or not 1 <= quality <= 95:
            raise ValueError(
                f"PhotoLimits.jpeg_quality must be an integer from 1 to 95; got {quality!r}."
            )
        if self.thumbnail_long_edge > self.display_long_edge:
            raise ValueError(
                "PhotoLimits.thumbnail_long_edge must not exceed display_long_edge; got "
                f"{self.thumbnail_long_edge} > {self.display_long_edge}."
            )
        if self.print_long_edge > self.display_long_edge:
            raise ValueError(
                "PhotoLimits.print_long_edge must not exceed display_long_edge (the print copy "
                f"is made from the display picture); got {self.print_long_edge} > "
                f"{self.display_long_edge}."
            )


@dataclass(frozen=True)
class IngestedPhoto:
    """What we keep of an accepted upload.

    The original bytes are deliberately absent: they may carry EXIF (position, device serial)
    or a hidden payload, and are never stored. `original_width`/`original_height` are the
    pixel grid of the uploaded file, before it was turned upright.

    `print_jpeg` is the copy the site record (PDF) embeds as it is: made here, once, so a
    record of hundreds of photos decodes none of them. It is stored under the display
    picture's hash (PhotoStore.put_print), so it needs no database column.
    """

    display_jpeg: bytes
    thumbnail_jpeg: bytes
    print_jpeg: bytes
    display_sha256: str
    thumbnail_sha256: str
    display_width: int
    display_height: int
    thumbnail_width: int
    thumbnail_height: int
    print_width: int
    print_height: int
    display_bytes: int
    thumbnail_bytes: int
    original_bytes: int
    original_width: int
    original_height: int
    original_format: str
    capture_time: str | None
    gps: tuple[float, float] | None
    # The upload's own hash: the same photo id sent again is a resend only with these bytes.
    original_sha256: str = ""

    def as_record(self) -> dict[str, Any]:
        """The facts about the photo without the pictures, ready for a database row."""
        return {
            "display_sha256": self.display_sha256,
            "thumbnail_sha256": self.thumbnail_sha256,
            "display_width": self.display_width,
            "display_height": self.display_height,
            "thumbnail_width": self.thumbnail_width,
            "thumbnail_height": self.thumbnail_height,
            "display_bytes": self.display_bytes,
            "thumbnail_bytes": self.thumbnail_bytes,
            "original_bytes": self.original_bytes,
            "original_width": self.original_width,
            "original_height": self.original_height,
            "original_format": self.original_format,
            "capture_time": self.capture_time,
            "latitude": self.gps[0] if self.gps else None,
            "longitude": self.gps[1] if self.gps else None,
        }


@dataclass(frozen=True)
class DecodedPhoto:
    """An upright RGB picture with what we read from the file on the way."""

    image: Image.Image
    original_width: int
    original_height: int
    original_format: str
    capture_time: str | None
    gps: tuple[float, float] | None
    icc_profile: bytes | None


def ingest_photo(
    data: bytes,
    *,
    limits: PhotoLimits = PhotoLimits(),
    wait_s: float | None = WAIT_FOR_SLOT_S,
) -> IngestedPhoto:
    """Check an upload and make the display picture, thumbnail and print copy we store.

    Raises PhotoRejected for anything that is not an acceptable photo, and PhotosBusy when
    the server is too busy to start on it (see processing_slot; the upload was not looked
    at). The same bytes always give the same output bytes, so a photo sent twice is stored
    once.
    """
    if not isinstance(data, bytes | bytearray | memoryview):
        raise TypeError(f"ingest_photo expects bytes; got {type(data).__name__}.")
    _check_byte_size(data, limits)
    # The header is read inside the slot too: reading it takes the decode lock, and a
    # request may wait for a lock only where the slots count it.
    with processing_slot(wait_s):
        decoded = decode_photo(data, limits=limits, draft_long_edge=limits.display_long_edge)
        display = _resize(decoded.image, limits.display_long_edge)
        display = _to_srgb(display, decoded.icc_profile)
        printed, thumbnail = _smaller_copies(display, limits)
        display_jpeg = encode_jpeg(display, quality=limits.jpeg_quality)
        thumbnail_jpeg = encode_jpeg(thumbnail, quality=limits.jpeg_quality)
        # A picture already small enough prints as the display file itself, byte for byte.
        print_jpeg = (
            display_jpeg
            if printed is display
            else encode_jpeg(printed, quality=limits.jpeg_quality)
        )
    return IngestedPhoto(
        display_jpeg=display_jpeg,
        thumbnail_jpeg=thumbnail_jpeg,
        print_jpeg=print_jpeg,
        display_sha256=hashlib.sha256(display_jpeg).hexdigest(),
        thumbnail_sha256=hashlib.sha256(thumbnail_jpeg).hexdigest(),
        display_width=display.width,
        display_height=display.height,
        thumbnail_width=thumbnail.width,
        thumbnail_height=thumbnail.height,
        print_width=printed.width,
        print_height=printed.height,
        display_bytes=len(display_jpeg),
        thumbnail_bytes=len(thumbnail_jpeg),
        original_bytes=len(data),
        original_width=decoded.original_width,
        original_height=decoded.original_height,
        original_format=decoded.original_format,
        capture_time=decoded.capture_time,
        gps=decoded.gps,
        original_sha256=hashlib.sha256(data).hexdigest(),
    )


def decode_photo(
    data: bytes,
    *,
    limits: PhotoLimits = PhotoLimits(),
    draft_long_edge: int | None = None,
) -> DecodedPhoto:
    """Decode untrusted bytes into an upright RGB picture, within the limits, or refuse.

    `draft_long_edge` lets a JPEG decode at 1/2, 1/4 or 1/8 scale when the result will be
    shrunk to that size anyway, and the resize then starts from a smaller picture; together
    this cuts the time to ingest a 12 MP photo by about 40 %. A PNG or WebP is decoded whole,
    then reduced strip by strip (see _reduced_rgb), so the only full-size picture in memory
    is the decoded one, never a converted copy of it.

    Warnings are caught for the decode only: Pillow's DecompressionBombWarning becomes a
    refusal, and its other warnings (odd EXIF, odd palettes) are not the inspector's concern.
    The filter is process-wide while the block runs (see _DECODE_LOCK); our own pixel check
    does not depend on it, so another thread can at worst have a warning silenced meanwhile.
    """
    if not isinstance(data, bytes | bytearray | memoryview):
        raise TypeError(f"decode_photo expects bytes; got {type(data).__name__}.")
    data = bytes(data)
    _check_byte_size(data, limits)
    with _DECODE_LOCK, warnings.catch_warnings():
        warnings.simplefilter("ignore")
        warnings.simplefilter("error", Image.DecompressionBombWarning)
        image = _open(data, limits)
        original_size = image.size
        original_format = "JPEG" if image.format == "MPO" else str(image.format)
        try:
            image.verify()
            image = Image.open(io.BytesIO(data), formats=list(ALLOWED_FORMATS))
            if draft_long_edge is not None and image.format in ("JPEG", "MPO"):
                image.draft(None, fit_within(image.size, draft_long_edge))
            image.load()
        except Image.DecompressionBombError as exc:
            raise _too_many_pixels(_pixels_from_bomb_message(exc), limits) from exc
        except _DECODE_ERRORS as exc:
            raise PhotoRejected(
                "damaged", "The image file is truncated or damaged; take or export it again."
            ) from exc
        # EXIF is parsed lazily and Pillow warns about odd EXIF, so read it inside the block.
        exif = _safe_exif(image)
        capture_time = read_capture_time(exif)
        gps = read_gps(exif)
        icc_profile = image.info.get("icc_profile")
        factor = _reduction(image.size, draft_long_edge)
        if image.format in _FULL_DECODE_FORMATS and factor > 1:
            rgb = _upright_by(_reduced_rgb(image, factor), exif)
        else:
            rgb = _to_rgb(_upright(image))
        del image  # the decoded picture: the largest thing held, and not needed again
    return DecodedPhoto(
        image=rgb,
        original_width=original_size[0],
        original_height=original_size[1],
        original_format=original_format,
        capture_time=capture_time,
        gps=gps,
        icc_profile=icc_profile if isinstance(icc_profile, bytes) and icc_profile else None,
    )


def _reduction(size: tuple[int, int], long_edge: int | None) -> int:
    """The whole-pixel factor a picture can be reduced by and keep its long edge at least
    `long_edge`, as a JPEG's reduced decode keeps it; the resize to the exact size follows."""
    if long_edge is None:
        return 1
    return max(1, max(size) // long_edge)


def _reduced_rgb(image: Image.Image, factor: int) -> Image.Image:
    """The picture as RGB on white, reduced by `factor`, converted a strip at a time.

    Palette, 16-bit and transparent pictures need a converted copy before they can be laid
    on white, and the copy of a whole picture is as large as the picture again (more, for a
    palette). Strips a multiple of `factor` rows high reduce exactly as the whole would.
    """
    width, height = image.size
    out = Image.new("RGB", (-(-width // factor), -(-height // factor)), _WHITE)
    rows = factor * max(1, _STRIP_ROWS // factor)
    for top in range(0, height, rows):
        strip = _to_rgb(image.crop((0, top, width, min(height, top + rows))))
        out.paste(strip.reduce(factor), (0, top // factor))
    return out


def _upright_by(image: Image.Image, exif: Image.Exif) -> Image.Image:
    """Turn a picture made from another (a reduced copy) as the original's EXIF says."""
    try:
        method = _UPRIGHT.get(int(exif.get(_ORIENTATION, 1)))
    except (TypeError, ValueError):
        method = None
    return image.transpose(method) if method is not None else image


def _check_byte_size(data: bytes, limits: PhotoLimits) -> None:
    if not data:
        raise PhotoRejected(
            "not-an-image", "The file is empty; expected a JPEG, PNG or WebP photo."
        )
    if len(data) > limits.max_bytes:
        size = _human_bytes(len(data), round_up=True)
        limit = _human_bytes(limits.max_bytes)
        raise PhotoRejected(
            "too-large",
            f"The file is {size}; the limit is {limit}. "
            "Lower the camera's resolution or quality and try again.",
        )


def _open(data: bytes, limits: PhotoLimits) -> Image.Image:
    """Open the header only, and apply our pixel limit before any pixel is decoded."""
    try:
        image = Image.open(io.BytesIO(data), formats=list(ALLOWED_FORMATS))
    except (Image.DecompressionBombError, Image.DecompressionBombWarning) as exc:
        raise _too_many_pixels(_pixels_from_bomb_message(exc), limits) from exc
    except UnidentifiedImageError as exc:
        raise _unidentified(data) from exc
    except _DECODE_ERRORS as exc:
        raise PhotoRejected(
            "damaged", "The image file is truncated or damaged; take or export it again."
        ) from exc
    width, height = image.size
    if width < 1 or height < 1:
        raise PhotoRejected("damaged", "The image file declares no pixels; it is damaged.")
    if width * height > _effective_max_pixels(limits):
        raise _too_many_pixels(width * height, limits)
    if image.format in _FULL_DECODE_FORMATS and width * height > limits.max_full_decode_pixels:
        raise _too_many_pixels_to_decode_whole(image.format, width * height, limits)
    return image


def _effective_max_pixels(limits: PhotoLimits) -> int:
    pillow_limit = Image.MAX_IMAGE_PIXELS
    if pillow_limit is None:
        return limits.max_pixels
    return min(limits.max_pixels, int(pillow_limit))


def _too_many_pixels(pixels: int | None, limits: PhotoLimits) -> PhotoRejected:
    limit = f"{_effective_max_pixels(limits) / 1e6:g} megapixels"
    if pixels is None:
        stated = f"The photo has more pixels than the limit of {limit}."
    else:
        stated = f"The photo is {pixels / 1e6:.1f} megapixels; the limit is {limit}."
    return PhotoRejected(
        "too-many-pixels",
        f"{stated} Lower the camera's resolution or resize the photo on the phone.",
    )


def _too_many_pixels_to_decode_whole(fmt: str, pixels: int, limits: PhotoLimits) -> PhotoRejected:
    name = "WebP" if fmt == "WEBP" else fmt
    whole = f"{limits.max_full_decode_pixels / 1e6:g} megapixels"
    jpeg = f"{_effective_max_pixels(limits) / 1e6:g}"
    return PhotoRejected(
        "too-many-pixels",
        f"The photo is a {name} of {pixels / 1e6:.1f} megapixels. A {name} is read whole, so "
        f"its limit is {whole} (a JPEG may have up to {jpeg}). Save or share it as a JPEG, "
        "or resize it on the phone.",
    )


def _pixels_from_bomb_message(exc: BaseException) -> int | None:
    match = _BOMB_PIXELS.search(str(exc))
    return int(match.group(1)) if match else None


def _unidentified(data: bytes) -> PhotoRejected:
    head = data[:64]
    if head.startswith(_ALLOWED_SIGNATURES) or (head[:4] == b"RIFF" and head[8:12] == b"WEBP"):
        return PhotoRejected(
            "damaged", "The image file is truncated or damaged; take or export it again."
        )
    refused = _refused_format(head)
    if refused is not None:
        hint = ""
        if refused in ("HEIC/HEIF", "AVIF"):
            hint = " Set the phone camera to save JPEG photos, or share the photo as JPEG."
        return PhotoRejected(
            "format-not-allowed",
            f"The file is a {refused} image; only {_FORMATS_TEXT} photos are accepted.{hint}",
        )
    return PhotoRejected("not-an-image", f"The file is not a {_FORMATS_TEXT} image.")


def _refused_format(head: bytes) -> str | None:
    for signature, name in _REFUSED_SIGNATURES:
        if head.startswith(signature):
            return name
    if head[4:8] == b"ftyp":
        brand = head[8:12]
        if brand in _HEIF_BRANDS:
            return "HEIC/HEIF"
        if brand in _AVIF_BRANDS:
            return "AVIF"
    text = head.lstrip().lower()
    if text.startswith(b"<svg") or (text.startswith(b"<?xml") and b"<svg" in text):
        return "SVG"
    return None


def _safe_exif(image: Image.Image) -> Image.Exif:
    try:
        return image.getexif()
    except Exception:
        return Image.Exif()


def _upright(image: Image.Image) -> Image.Image:
    """Turn the picture the way the camera was held; odd EXIF leaves it as it is."""
    with contextlib.suppress(Exception):
        ImageOps.exif_transpose(image, in_place=True)
    return image


def _to_rgb(image: Image.Image) -> Image.Image:
    """RGB with any transparency laid on white, as a page would show it."""
    if image.mode in _SIXTEEN_BIT_MODES:
        # Pillow clips 16-bit grey to 8 bits; scale it instead so mid-greys stay grey.
        image = image.convert("I").point(lambda value: value * (1 / 256)).convert("L")
    has_alpha = image.mode in ("RGBA", "LA", "PA", "RGBa", "La") or "transparency" in image.info
    if has_alpha:
        # Pasted through its own alpha onto white: one RGB picture and the alpha channel
        # beside the original, where compositing on an RGBA background needed three copies.
        rgba = image if image.mode == "RGBA" else image.convert("RGBA")
        flat = Image.new("RGB", rgba.size, _WHITE)
        flat.paste(rgba, mask=rgba.getchannel("A"))
        return flat
    if image.mode != "RGB":
        return image.convert("RGB")
    return image


def _to_srgb(image: Image.Image, icc_profile: bytes | None) -> Image.Image:
    """Convert from the camera's colour space (e.g. Display P3) so colours survive dropping it.

    The stored JPEG carries no profile, and browsers read an untagged JPEG as sRGB. A profile
    we cannot use is ignored: the colours shift a little, the photo is still evidence.
    """
    if icc_profile is None:
        return image
    try:
        source = ImageCms.ImageCmsProfile(io.BytesIO(icc_profile))
        if source.profile.xcolor_space.strip() != "RGB":
            return image
        converted = ImageCms.profileToProfile(
            image, source, ImageCms.createProfile("sRGB"), outputMode="RGB"
        )
    except _PROFILE_ERRORS:
        return image
    return converted if converted is not None else image


def _resize(image: Image.Image, long_edge: int) -> Image.Image:
    size = fit_within(image.size, long_edge)
    if size == image.size:
        return image
    return image.resize(size, Image.Resampling.LANCZOS, reducing_gap=3.0)


def _smaller_copies(display: Image.Image, limits: PhotoLimits) -> tuple[Image.Image, Image.Image]:
    """The print copy and the thumbnail of a display picture: (print, thumbnail).

    Both come from one reduced copy of it: a box average by the largest whole factor that
    keeps the print copy's long edge (1600 to 448 px: by 3, to 534 px), then LANCZOS to each
    exact size. A LANCZOS resize costs in proportion to the pixels it reads, so two of them
    from the whole display picture took three times the CPU of the photo's decode; from the
    reduced copy they take a ninth of that. The pictures differ from LANCZOS all the way by
    less than JPEG's own loss (tests/test_photos.py measures it). A picture already small
    enough is used as it is, as before.
    """
    printed_size = fit_within(display.size, limits.print_long_edge)
    thumb_size = fit_within(display.size, limits.thumbnail_long_edge)
    factor = min(display.width // printed_size[0], display.height // printed_size[1])
    source, box = display, (0.0, 0.0, float(display.width), float(display.height))
    if factor > 1:
        source = display.reduce(factor)
        # The reduced copy's last row and column average fewer pixels when the size is not a
        # multiple of the factor; resizing from the box the whole picture maps to leaves them
        # out, as Pillow's own reduce-then-resize does.
        box = (0.0, 0.0, display.width / factor, display.height / factor)

    def resized(size: tuple[int, int]) -> Image.Image:
        if size == display.size:
            return display
        return source.resize(size, Image.Resampling.LANCZOS, box=box)

    return resized(printed_size), resized(thumb_size)


def _human_bytes(count: int, *, round_up: bool = False) -> str:
    """Bytes in kB or MB; a file's size is rounded up so it never reads as equal to the limit."""
    for unit, size in (("MB", 1_000_000), ("kB", 1_000)):
        if count >= size:
            value = math.ceil(count * 10 / size) / 10 if round_up else count / size
            return f"{value:g} {unit}"
    return f"{count} bytes"
