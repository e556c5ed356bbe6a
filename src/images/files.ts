// Thin Node file I/O over codec.ts: read a file and decode it, encode and write by the output extension.
// The only module in src/images that imports fs; it holds no format knowledge beyond the extension table.

import { randomBytes } from 'node:crypto';
import { promises as fs } from 'node:fs';
import * as path from 'node:path';
import { createHash } from 'node:crypto';
import { EncodeOptions, decodeImage, encodeColourImage, encodeImage, formatFromExtension } from './codec';
import { DecodeOptions, DecodedImage, GreyImage, ImageError } from './types';

/** Reads and decodes an image file; the format comes from the file's magic bytes, not its name. */
export async function readImageFile(filePath: string, opts: DecodeOptions = {}): Promise<DecodedImage> {
  // A whole-file read is fine: maxPixels bounds the decoded size, and the compressed file is smaller than that in practice.
  const buf = await fs.readFile(filePath);
  const bytes = new Uint8Array(buf.buffer, buf.byteOffset, buf.byteLength);
  try {
    return decodeImage(bytes, opts);
  } catch (e) {
    if (e instanceof ImageError) throw new ImageError(e.code, `${filePath}: ${e.message}`);
    throw e;
  }
}

/**
 * Reads and decodes an image file and returns the SHA-256 (hex) of the file's bytes as read, for provenance records.
 */
export async function readImageFileHashed(filePath: string, opts: DecodeOptions = {}): Promise<{ image: DecodedImage; sha256: string }> {
  const buf = await fs.readFile(filePath);
  const sha256 = createHash('sha256').update(buf).digest('hex');
  const bytes = new Uint8Array(buf.buffer, buf.byteOffset, buf.byteLength);
  try {
    return { image: decodeImage(bytes, opts), sha256 };
  } catch (e) {
    if (e instanceof ImageError) throw new ImageError(e.code, `${filePath}: ${e.message}`);
    throw e;
  }
}

/** Writes three channels as one colour picture (.png RGB or .pfm PF), replacing the target only once complete. */
export async function writeColourImageFile(filePath: string, r: GreyImage, g: GreyImage, b: GreyImage, opts: EncodeOptions = {}): Promise<void> {
  const format = formatFromExtension(filePath);
  if (format === null) throw new ImageError('bad-option', `${filePath}: cannot tell the output format; use .png or .pfm for a colour result`);
  await writeFileAtomically(filePath, encodeColourImage(r, g, b, format, opts));
}

/**
 * Encodes one grey channel in the format given by the extension (.png, .pgm, .pfm, .tif, .tiff) and writes it.
 * The bytes go to a temporary file in the same folder, which is then renamed over the target,
 * so an existing file is replaced only when the whole write succeeded.
 */
export async function writeImageFile(filePath: string, image: GreyImage, opts: EncodeOptions = {}): Promise<void> {
  const format = formatFromExtension(filePath);
  if (format === null) {
    throw new ImageError('bad-option', `${filePath}: cannot tell the output format; use .png, .pgm, .pfm, .tif or .tiff`);
  }
  await writeFileAtomically(filePath, encodeImage(image, format, opts));
}

let tmpCounter = 0;

/**
 * Writes bytes or text to a temporary file beside `filePath` and renames it over the target, so an existing file
 * is replaced only once the new content is complete. Missing parent folders are created (that destroys nothing).
 */
export async function writeFileAtomically(filePath: string, data: Uint8Array | string): Promise<void> {
  const dir = path.dirname(filePath);
  await fs.mkdir(dir, { recursive: true });
  // A counter and random bytes as well as the process and the time: two writes in the same millisecond (a sweep's
  // outputs, or two saves of one file) must never share a temporary file, or one would rename the other's half.
  const unique = `${process.pid}.${Date.now().toString(36)}.${(tmpCounter++).toString(36)}.${randomBytes(4).toString('hex')}`;
  const tmp = path.join(dir, `.${path.basename(filePath)}.${unique}.tmp`);
  try {
    await fs.writeFile(tmp, data);
    await fs.rename(tmp, filePath);
  } catch (e) {
    await fs.rm(tmp, { force: true });
    throw e;
  }
}
