// Photos are made smaller on the phone before they are kept: a basement visit can fill the
// outbox with dozens of 5-10 MB camera pictures, and the server keeps at most 1600 px anyway.

export const LONG_EDGE = 1600;
const QUALITY = 0.85;

function isoSeconds(ms) {
  return new Date(ms).toISOString().replace(/\.\d+Z$/, "Z");
}

export async function shrink(file) {
  // The file's own time is the capture time for a camera picture; re-encoding below drops
  // the camera's EXIF time (and its location), so it is kept beside the picture, with its zone.
  const captured_at = file.lastModified ? isoSeconds(file.lastModified) : null;
  const base = { uuid: crypto.randomUUID(), name: file.name || "photo.jpg", captured_at, bytes_before: file.size };
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
