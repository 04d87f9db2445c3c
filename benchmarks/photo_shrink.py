"""How much smaller the phone makes a camera photo before it is kept and sent; print it.

    .venv/bin/python benchmarks/photo_shrink.py [--runs 5] [--seed 4]

A 12-megapixel camera-like JPEG (4000 x 3000, quality 92, with EXIF: make, model, time taken
and the camera's UTC offset, orientation, a position) is made with Pillow: an invented
masonry wall of blocks and mortar joints under uneven light, lightly blurred as a lens
does, with sensor noise. Flat test cards shrink far more than real pictures; noise and
texture keep the encoder honest. The phone's own code (static/js/photos.js, shrink()) then
runs in Debian's chromium on a phone's screen (Pixel 7), given the file through a file
input as the camera hands it over. Printed: bytes before and after, the ratio, the size,
the capture time read from EXIF, and how long shrink() took (first run and median).

Target (issue 4): the photo as sent at least 10 times smaller than the camera's original.
"""

from __future__ import annotations

import argparse
import io
import logging
import random
import shutil
import statistics
import sys
import tempfile
import threading
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "tests"))  # kit/
from kit.chromium import launch, phone  # noqa: E402

TARGET_RATIO = 10


def camera_like_jpeg(seed: int, width: int = 4000, height: int = 3000) -> bytes:
    """An invented photo of a block wall, as a phone camera would save it."""
    from PIL import Image, ImageChops, ImageDraw, ImageFilter

    rng = random.Random(seed)
    wall = Image.new("RGB", (width, height), (92, 88, 84))  # mortar
    draw = ImageDraw.Draw(wall)
    course, block, joint = 215, 440, 10  # mm-like proportions, in pixels
    for row, y in enumerate(range(0, height, course + joint)):
        shift = (block + joint) // 2 if row % 2 else 0
        for x in range(-shift, width, block + joint):
            shade = rng.randint(-28, 28)
            base = (168 + shade, 160 + shade, 150 + shade + rng.randint(-6, 6))
            draw.rectangle((x, y, x + block, y + course), fill=base)
            for _ in range(40):  # pits and stains in the block face
                px, py = x + rng.randint(0, block), y + rng.randint(0, course)
                r = rng.randint(2, 14)
                tone = rng.randint(-40, 20)
                draw.ellipse(
                    (px - r, py - r, px + r, py + r),
                    fill=(base[0] + tone, base[1] + tone, base[2] + tone),
                )
    # Uneven light: brighter at the top left, falling off to the bottom right, and darker
    # towards the corners as a small lens gives.
    down = Image.linear_gradient("L").resize((width, height))
    across = Image.linear_gradient("L").rotate(90).resize((width, height))
    diagonal = ImageChops.add(down, across.transpose(Image.Transpose.FLIP_LEFT_RIGHT), scale=2)
    corners = Image.radial_gradient("L").resize((width, height))
    light = ImageChops.multiply(
        diagonal.point(lambda v: 255 - v // 3), corners.point(lambda v: 255 - v // 4)
    )
    wall = ImageChops.multiply(wall, Image.merge("RGB", (light, light, light)))
    wall = wall.filter(ImageFilter.GaussianBlur(1.2))
    # Sensor noise, a little different in each channel, as a small sensor gives in dim light.
    noise = [Image.effect_noise((width, height), 9 + c) for c in range(3)]
    noisy = Image.merge("RGB", noise)
    wall = ImageChops.add(wall, noisy, scale=1.0, offset=-128)

    exif = Image.Exif()
    exif[0x010F] = "Invented Phone Co"  # Make
    exif[0x0110] = "Model 12"  # Model
    exif[0x0112] = 1  # Orientation: upright
    exif[0x0132] = "2026:05:04 10:31:07"  # DateTime
    exif_ifd = exif.get_ifd(0x8769)
    exif_ifd[0x9003] = "2026:05:04 10:31:07"  # DateTimeOriginal
    exif_ifd[0x9011] = "+01:00"  # OffsetTimeOriginal
    gps = exif.get_ifd(0x8825)
    gps.update({1: "N", 2: (51.0, 30.0, 12.5), 3: "W", 4: (0.0, 7.0, 40.2)})  # invented place
    out = io.BytesIO()
    wall.save(out, "JPEG", quality=92, exif=exif)
    return out.getvalue()


SHRINK = """async ({runs}) => {
  const { shrink } = await import("/static/js/photos.js");
  const file = document.querySelector("#camera").files[0];
  const times = [];
  let last;
  for (let i = 0; i < runs; i += 1) {
    const start = performance.now();
    last = await shrink(file);
    times.push(performance.now() - start);
  }
  return { times, before: file.size, after: last.blob.size, width: last.width,
           height: last.height, shrunk: last.shrunk, captured_at: last.captured_at,
           captured_from: last.captured_from, type: last.blob.type };
}"""


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--runs", type=int, default=5)
    parser.add_argument("--seed", type=int, default=4)
    args = parser.parse_args()

    from playwright.sync_api import sync_playwright
    from waitress import create_server

    # Its queue warnings are about this machine's two busy cores, not about the figure.
    logging.getLogger("waitress.queue").setLevel(logging.ERROR)

    from sitecheck.web import create_app

    chromium = shutil.which("chromium")
    if not chromium:
        print("chromium not found: apt-get install -y chromium", file=sys.stderr)
        return 3
    photo = camera_like_jpeg(args.seed)
    work = Path(tempfile.mkdtemp(prefix="sitecheck-photo-"))
    server = create_server(create_app(work / "empty.db"), host="127.0.0.1", port=0, threads=2)
    url = f"http://127.0.0.1:{server.effective_port}"
    threading.Thread(target=server.run, daemon=True).start()
    try:
        with sync_playwright() as p:
            browser = launch(p, chromium)
            device = phone(p)
            page = browser.new_context(**device, base_url=url).new_page()
            page.goto("/offline")
            page.evaluate(
                """() => { const input = document.createElement("input");
                  input.type = "file"; input.id = "camera"; input.accept = "image/*";
                  document.body.append(input); }"""
            )
            page.set_input_files(
                "#camera",
                files=[{"name": "IMG_2031.jpg", "mimeType": "image/jpeg", "buffer": photo}],
            )
            result = page.evaluate(SHRINK, {"runs": args.runs})
            browser.close()
    finally:
        server.close()
        shutil.rmtree(work, ignore_errors=True)

    ratio = result["before"] / result["after"]
    times = result["times"]
    print("Camera original: 4000 x 3000 (12 MP) JPEG, quality 92, with EXIF")
    print(f"  bytes:                      {result['before']:>10,}")
    print(
        f"As kept and sent by the phone: {result['width']} x {result['height']} "
        f"{result['type']} (shrunk: {result['shrunk']})"
    )
    print(f"  bytes:                      {result['after']:>10,}")
    print(f"  capture time kept:          {result['captured_at']} (from {result['captured_from']})")
    print(
        f"ratio: {ratio:.1f}x smaller (target >= {TARGET_RATIO}x): "
        f"{'met' if ratio >= TARGET_RATIO else 'NOT met'}"
    )
    print(
        f"shrink() time in chromium: first {times[0]:.0f} ms, median of {len(times)} "
        f"{statistics.median(times):.0f} ms, fastest {min(times):.0f} ms"
    )
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
