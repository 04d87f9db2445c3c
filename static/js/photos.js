// Photos are made smaller on the phone before they are kept: a basement visit can fill the
// outbox with dozens of 5-10 MB camera pictures, and the server keeps at most 1600 px anyway.

export const LONG_EDGE = 1600;
const QUALITY = 0.85;
// EXIF sits in an APP1 segment near the start of the file (a segment is at most 64 KB, and
// only a JFIF header or an ICC profile may come before it): this much is always enough.
const HEAD_BYTES = 256 * 1024;

function isoSeconds(ms) {
  return new Date(ms).toISOString().replace(/\.\d+Z$/, "Z");
}

export async function shrink(file) {
  // Re-encoding below drops the camera's EXIF (its time and its location), so the capture
  // time is read first and kept beside the picture, always with its zone.
  const camera = await cameraTime(file);
  const fileTime = file.lastModified ? isoSeconds(file.lastModified) : null;
  const base = {
    uuid: crypto.randomUUID(),
    name: file.name || "photo.jpg",
    captured_at: camera ? camera.at : fileTime,
    captured_from: camera ? camera.from : fileTime ? "file" : null,
    bytes_before: file.size,
  };
  let bitmap;
  try {
    bitmap = await createImageBitmap(file, { imageOrientation: "from-image" });
  } catch (error) {
    // A picture the phone cannot read is kept as it is: the server decides, never the phone silently.
    return { ...base, blob: file, bytes_after: file.size, shrunk: false };
  }
  const scale = Math.min(1, LONG_EDGE / Math.max(bitmap.width, bitmap.height));
  const width = Math.max(1, Math.round(bitmap.width * scale));
  const height = Math.max(1, Math.round(bitmap.height * scale));
  const canvas = document.createElement("canvas");
  canvas.width = width;
  canvas.height = height;
  canvas.getContext("2d").drawImage(bitmap, 0, 0, width, height);
  bitmap.close();
  const blob = await new Promise((resolve) => canvas.toBlob(resolve, "image/jpeg", QUALITY));
  if (!blob) return { ...base, blob: file, bytes_after: file.size, shrunk: false };
  const name = base.name.replace(/\.[^.]*$/, "") + ".jpg";
  return { ...base, name, blob, width, height, bytes_after: blob.size, shrunk: true };
}

// --- the camera's time, from EXIF ------------------------------------------------------------
//
// {at: "2026-03-14T08:26:53Z", from} or null. DateTimeOriginal is when the shutter fired;
// DateTime (when the file was written) is the fallback, as on the server. With the camera's
// own offset (OffsetTimeOriginal / OffsetTime) the moment is exact: from = "camera". Without
// one, the time is the camera's local time; the phone's camera writes it in the phone's own
// zone, which the phone knows (and the server does not), so it is read in that zone:
// from = "camera, phone's zone". A file with no usable EXIF time gives null, and the caller
// falls back to the file's own time.

export async function cameraTime(file) {
  let buffer;
  try {
    buffer = await file.slice(0, HEAD_BYTES).arrayBuffer();
  } catch (error) {
    return null;
  }
  return readCameraTime(new DataView(buffer));
}

const TAG_DATETIME = 0x0132;
const TAG_EXIF_IFD = 0x8769;
const TAG_DATETIME_ORIGINAL = 0x9003;
const TAG_OFFSET_TIME = 0x9010;
const TAG_OFFSET_TIME_ORIGINAL = 0x9011;
const TYPE_ASCII = 2;
const EXIF_TIME = /^(\d{4}):(\d{2}):(\d{2})[ T](\d{2}):(\d{2}):(\d{2})/;
const OFFSET = /^([+-])(0\d|1[0-4]):([0-5]\d)$/;

export function readCameraTime(view) {
  try {
    const tiff = exifSegment(view);
    if (!tiff) return null;
    const ifd0 = readIfd(tiff, tiff.u32(4));
    const exifOffset = ifd0.get(TAG_EXIF_IFD);
    const exif = exifOffset ? readIfd(tiff, tiff.u32(exifOffset.at + 8)) : new Map();
    const pairs = [
      [exif.get(TAG_DATETIME_ORIGINAL), exif.get(TAG_OFFSET_TIME_ORIGINAL)],
      [ifd0.get(TAG_DATETIME), exif.get(TAG_OFFSET_TIME)],
    ];
    for (const [time, offset] of pairs) {
      const moment = time && toMoment(ascii(tiff, time), offset && ascii(tiff, offset));
      if (moment) return moment;
    }
  } catch (error) {
    // EXIF is written by many devices and is often damaged: a photo is evidence whatever its
    // EXIF says, so a reading error only means "no camera time".
  }
  return null;
}

// The TIFF block inside the first APP1 "Exif" segment, with bounds-checked readers, or null.
function exifSegment(view) {
  if (view.byteLength < 4 || view.getUint16(0) !== 0xffd8) return null;
  let pos = 2;
  while (pos + 4 <= view.byteLength) {
    if (view.getUint8(pos) !== 0xff) return null;
    const marker = view.getUint8(pos + 1);
    if (marker === 0xff) { pos += 1; continue; } // fill byte
    if (marker === 0xda || marker === 0xd9) return null; // picture data: no EXIF before it
    if ((marker >= 0xd0 && marker <= 0xd7) || marker === 0x01) { pos += 2; continue; }
    const size = view.getUint16(pos + 2);
    if (size < 2) return null;
    const start = pos + 4;
    const end = Math.min(view.byteLength, pos + 2 + size);
    if (marker === 0xe1 && end - start > 14 && view.getUint32(start) === 0x45786966 && view.getUint16(start + 4) === 0) {
      return tiffReader(view, start + 6, end);
    }
    pos += 2 + size;
  }
  return null;
}

function tiffReader(view, start, end) {
  const order = view.getUint16(start);
  if (order !== 0x4949 && order !== 0x4d4d) return null;
  const little = order === 0x4949;
  const check = (offset, n) => {
    if (offset < 0 || start + offset + n > end) throw new RangeError("EXIF runs past its segment");
    return start + offset;
  };
  const reader = {
    u8: (offset) => view.getUint8(check(offset, 1)),
    u16: (offset) => view.getUint16(check(offset, 2), little),
    u32: (offset) => view.getUint32(check(offset, 4), little),
  };
  return reader.u16(2) === 42 ? reader : null;
}

// The entries of one IFD by tag: {type, count, at} with `at` the entry's offset in the TIFF.
function readIfd(tiff, offset) {
  const entries = new Map();
  const n = tiff.u16(offset);
  for (let i = 0; i < Math.min(n, 512); i += 1) {
    const at = offset + 2 + i * 12;
    entries.set(tiff.u16(at), { type: tiff.u16(at + 2), count: tiff.u32(at + 4), at });
  }
  return entries;
}

function ascii(tiff, entry) {
  if (entry.type !== TYPE_ASCII || entry.count > 64) return null;
  const from = entry.count <= 4 ? entry.at + 8 : tiff.u32(entry.at + 8);
  let text = "";
  for (let i = 0; i < entry.count; i += 1) {
    const c = tiff.u8(from + i);
    if (c === 0) break;
    text += String.fromCharCode(c);
  }
  return text.trim();
}

function toMoment(text, offsetText) {
  const m = text && EXIF_TIME.exec(text);
  if (!m) return null;
  const [y, mo, d, h, mi, s] = m.slice(1).map(Number);
  // Date.UTC rolls 2026:02:30 over into March; a date that does not round-trip is not a date.
  const asUtc = Date.UTC(y, mo - 1, d, h, mi, s);
  const check = new Date(asUtc);
  if (
    y < 1900 || check.getUTCFullYear() !== y || check.getUTCMonth() !== mo - 1 ||
    check.getUTCDate() !== d || h > 23 || mi > 59 || s > 59
  ) {
    return null;
  }
  const offset = offsetText && OFFSET.exec(offsetText);
  if (offset) {
    const minutes = (Number(offset[2]) * 60 + Number(offset[3])) * (offset[1] === "-" ? -1 : 1);
    return { at: isoSeconds(asUtc - minutes * 60000), from: "camera" };
  }
  return { at: isoSeconds(new Date(y, mo - 1, d, h, mi, s).getTime()), from: "camera, phone's zone" };
}
