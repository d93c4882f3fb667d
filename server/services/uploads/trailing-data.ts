import { readFile } from 'node:fs/promises';

/**
 * Bytes after the end of the image are how polyglot files work (a PNG that is also a zip archive, a
 * JPEG that is also a script): decoders stop at the image's end marker and never see them. The store
 * keeps originals byte for byte, so such files are refused instead. Containers are read by their own
 * framing, from the published format specifications:
 *  - PNG (ISO/IEC 15948, W3C PNG spec): 8-byte signature, then length/type/data/CRC chunks up to IEND.
 *  - JPEG (ITU-T T.81): the stream ends with the EOI marker FF D9; trailing 0x00/0xFF fill is tolerated.
 *  - GIF (GIF89a spec): the trailer byte 0x3B ends the stream.
 *  - WebP (RIFF container, RFC 9649): the RIFF size field covers the whole file (padded to even length).
 * TIFF and AVIF files are offset-addressed containers without a single end marker; they are left to the decoder.
 * Returns the number of unexplained trailing bytes (0 when the file ends where its format says).
 */
export function trailingBytes(format: string, data: Buffer): number {
  switch (format) {
    case 'png':
      return pngTrailing(data);
    case 'jpeg':
      return jpegTrailing(data);
    case 'gif':
      return gifTrailing(data);
    case 'webp':
      return webpTrailing(data);
    default:
      return 0;
  }
}

function pngTrailing(data: Buffer): number {
  let offset = 8;
  while (offset + 12 <= data.length) {
    const length = data.readUInt32BE(offset);
    const type = data.toString('latin1', offset + 4, offset + 8);
    const end = offset + 12 + length;
    if (end > data.length) return 0; // truncated: the decoder reports that with a better message
    if (type === 'IEND') return data.length - end;
    offset = end;
  }
  return 0;
}

function jpegTrailing(data: Buffer): number {
  // FF D9 cannot occur inside entropy-coded data (an FF there is always followed by a stuffed 00), so the
  // last FF D9 is the end of the image; zero fill after it is common from some writers and is allowed.
  let end = data.length;
  while (end > 0 && data[end - 1] === 0x00) end--;
  if (end >= 2 && data[end - 2] === 0xff && data[end - 1] === 0xd9) return 0;
  const eoi = data.lastIndexOf(Buffer.from([0xff, 0xd9]));
  return eoi < 0 ? 0 : data.length - (eoi + 2);
}

function gifTrailing(data: Buffer): number {
  if (data[data.length - 1] === 0x3b) return 0;
  const trailer = data.lastIndexOf(0x3b);
  return trailer < 0 ? 0 : data.length - (trailer + 1);
}

function webpTrailing(data: Buffer): number {
  if (data.length < 12 || data.toString('latin1', 0, 4) !== 'RIFF') return 0;
  const size = data.readUInt32LE(4) + 8;
  const padded = size + (size % 2);
  return data.length > padded ? data.length - padded : 0;
}

/**
 * trailingBytes for a file on disk. The walkers above take the bytes in memory, so the file is read whole —
 * at most the per-file upload limit, and the upload service inspects only a few files at once.
 */
export async function trailingBytesInFile(format: string, file: string): Promise<number> {
  return trailingBytes(format, await readFile(file));
}
