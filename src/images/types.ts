// Image value types shared by every codec: the grey image, decode options, the decoded result and ImageError.
// Pure data definitions plus tiny helpers; must not import Node (fs, path) or any codec library.

import ndarray from 'ndarray';

/** One channel of pixel values, row-major with y pointing down: value at (x, y) is data[y * width + x]. */
export interface GreyImage {
  width: number;
  height: number;
  data: Float32Array;
}

/** Formats we read; the decoder picks one by sniffing magic bytes, never by the file name. */
export type ImageFormat = 'png' | 'jpeg' | 'tiff' | 'pgm' | 'pfm';

/** Formats we write (one grey channel each). */
export type WritableFormat = 'png' | 'pgm' | 'pfm' | 'tiff';

/** Stable error codes, so callers (CLI exit codes, diagnostics) can switch on them instead of on message text. */
export type ImageErrorCode =
  | 'too-large' // the header claims more pixels than maxPixels
  | 'unknown-format' // magic bytes match no supported format
  | 'broken' // truncated or inconsistent file
  | 'empty' // zero bytes, or zero width/height
  | 'unsupported' // a valid file using a feature we do not read (e.g. tiled TIFF, 12-bit JPEG)
  | 'bad-option'; // an option value that makes no sense (e.g. range with hi <= lo)

export class ImageError extends Error {
  readonly code: ImageErrorCode;
  constructor(code: ImageErrorCode, message: string) {
    super(message);
    this.name = 'ImageError';
    this.code = code;
  }
}

/** Default refusal threshold: 64 megapixels (a Float32 grey copy is then 256 MB). */
export const DEFAULT_MAX_PIXELS = 64 * 1024 * 1024;

export interface DecodeOptions {
  /** Refuse images with more pixels than this, checked on the header before any pixel allocation. */
  maxPixels?: number;
  /** Integer formats only: value = (sample - lo) / (hi - lo) instead of sample / (2^bits - 1). Ignored for float formats. */
  range?: { lo: number; hi: number };
  /**
   * 'luma' (default) gives one BT.709 grey channel; 'separate' gives R, G, B as separate channels for colour files;
   * 'all' gives R, G, B, A and Y (BT.709 luma) for every file (grey files: the grey value as R, G, B and Y;
   * alpha 1 where none is stored).
   */
  channels?: 'luma' | 'separate' | 'all';
}

export interface DecodedImage {
  format: ImageFormat;
  width: number;
  height: number;
  /** Bits per stored sample (8, 16 or 32); for PGM the bits needed for maxval. */
  bitDepth: number;
  sampleFormat: 'uint' | 'float';
  /** True when the file stored colour samples (RGB or palette). */
  colour: boolean;
  /** The divisor mapping used for integer formats, value = (sample - lo) / (hi - lo); null for float formats. */
  scaling: { lo: number; hi: number } | null;
  /** Names of the returned channels: ['grey'], ['luma'], ['R', 'G', 'B'] or ['R', 'G', 'B', 'A', 'Y']. */
  channelNames: string[];
  channels: GreyImage[];
}

export function makeGreyImage(width: number, height: number, data?: Float32Array): GreyImage {
  const d = data ?? new Float32Array(width * height);
  if (d.length !== width * height) {
    throw new RangeError(`data length ${d.length} does not match ${width}x${height}`);
  }
  return { width, height, data: d };
}

/**
 * View a grey image as an ndarray sharing its data.
 * NB: ndarray shapes are [rows, cols], i.e. [height, width]; index as view.get(y, x).
 */
export function toNdarray(image: GreyImage): ndarray.NdArray<Float32Array> {
  return ndarray(image.data, [image.height, image.width]);
}
