// The pictures of a command-line run: `--input PATH` (the main input), `--input NAME=PATH` (named inputs, also
// `NAME=scene:SCENE` for a generated one), `--scene NAME`, `--range [NAME=]LO:HI`; reads and hashes the files,
// binds the scheme's `image` fields (images/inputs.ts) and records where every picture came from, for --stats
// and --replay. Shared by run, kernel, sweep and fit. Node-only; must not import vscode.

import { ImageError, type GreyImage } from '../images/types';
import { readImageFileHashed } from '../images/files';
import {
  bindInputs, channelImage, InputBindingError, makeInput, namedInputs, pictureFromDecoded, readsMainInput,
  type InputPicture,
} from '../images/inputs';
import { INPUT_NAME, type CheckedScheme } from '../notation/scheme';
import { numberArg, rangeArg, UsageError, wholeArg } from './args';

/** Where one picture of a run came from (the `inputs` list of --stats). */
export interface InputRecord {
  /** null for the main input, else the name the scheme uses (`image "NAME"`). */
  readonly name: string | null;
  /** The file path as given, or `scene:NAME` for a generated picture. */
  readonly source: string;
  /** SHA-256 (hex) of the file's bytes as read from disk; absent for generated pictures. */
  readonly sha256?: string;
  readonly format?: string;
  readonly width: number;
  readonly height: number;
  /** `--range` for this input (integer formats only). */
  readonly range?: { readonly lo: number; readonly hi: number };
  /** Generated pictures: the noise sigma and the seed that made them. */
  readonly noise?: number;
  readonly seed?: number;
}

export interface InputArgs {
  readonly input?: readonly string[];
  readonly range?: readonly string[];
  readonly scene?: string;
  readonly noise?: string;
  readonly seed?: string;
  readonly size?: { width: number; height: number };
}

export interface LoadedInputs {
  /** The picture of every image field, by field name (for createRun's `fieldImages`). */
  readonly fieldImages: Record<string, GreyImage>;
  /** The main input's grey (luma) picture, or null. */
  readonly image: GreyImage | null;
  /** A generated main scene's clean picture, in the channel of the picture field (for PSNR/SSIM); else null. */
  readonly reference: GreyImage | null;
  readonly records: InputRecord[];
  /** The main input's label for `input` in --stats: the path or `scene:NAME`; null without a main input. */
  readonly label: string | null;
  readonly seed?: number;
}

/** `--input` values split into the main one (at most one) and named ones; a value `NAME=...` with NAME a valid name is named. */
export function parseInputArgs(values: readonly string[] | undefined, ranges: readonly string[] | undefined, usage: string): {
  main: string | null; named: Map<string, string>; mainRange?: { lo: number; hi: number }; namedRanges: Map<string, { lo: number; hi: number }>;
} {
  let main: string | null = null;
  const named = new Map<string, string>();
  for (const v of values ?? []) {
    const eq = v.indexOf('=');
    const name = eq > 0 ? v.slice(0, eq) : null;
    if (name !== null && INPUT_NAME.test(name)) {
      if (named.has(name)) throw new UsageError(`--input ${name}=... is given twice.\n${usage}`);
      if (eq === v.length - 1) throw new UsageError(`--input ${name}= needs a PATH (or scene:NAME).\n${usage}`);
      named.set(name, v.slice(eq + 1));
    } else {
      if (main !== null) throw new UsageError(`--input PATH (the main input) is given twice ('${main}' and '${v}'); named inputs are --input NAME=PATH.\n${usage}`);
      main = v;
    }
  }
  let mainRange: { lo: number; hi: number } | undefined;
  const namedRanges = new Map<string, { lo: number; hi: number }>();
  for (const r of ranges ?? []) {
    const m = /^([A-Za-z][A-Za-z0-9_-]*)=(.*)$/.exec(r);
    const parsed = rangeArg(m ? m[2] : r, usage) as { lo: number; hi: number };
    if (!(parsed.hi > parsed.lo)) throw new UsageError(`--range takes LO:HI with LO < HI, e.g. 0:4095; got '${r}'.\n${usage}`);
    if (m) {
      if (!named.has(m[1])) throw new UsageError(`--range ${m[1]}=...: there is no --input ${m[1]}=PATH.\n${usage}`);
      namedRanges.set(m[1], parsed);
    } else {
      if (mainRange) throw new UsageError(`--range for the main input is given twice.\n${usage}`);
      if (main === null) throw new UsageError(`--range goes with --input.\n${usage}`);
      mainRange = parsed;
    }
  }
  return { main, named, mainRange, namedRanges };
}

async function readFilePicture(path: string, name: string | null, range: { lo: number; hi: number } | undefined): Promise<{ picture: InputPicture; record: InputRecord }> {
  const { image, sha256 } = await readImageFileHashed(path, { channels: 'all', ...(range ? { range } : {}) });
  return {
    picture: pictureFromDecoded(image),
    record: { name, source: path, sha256, format: image.format, width: image.width, height: image.height, ...(range ? { range } : {}) },
  };
}

/**
 * Reads, generates and binds every picture the scheme needs. Throws UsageError (exit 2), ImageError (a bad file or
 * scene), InputBindingError (missing or mis-sized input, with the field's range) or a Node error for unreadable files.
 */
export async function loadInputs(scheme: CheckedScheme, a: InputArgs, usage: string): Promise<LoadedInputs> {
  const { main, named, mainRange, namedRanges } = parseInputArgs(a.input, a.range, usage);
  if (main !== null && a.scene) throw new UsageError(`give --input PATH or --scene, not both.\n${usage}`);
  if ((a.noise !== undefined || a.seed !== undefined) && !a.scene) throw new UsageError(`--noise and --seed go with --scene.\n${usage}`);
  const records: InputRecord[] = [];
  let mainPicture: InputPicture | null = null;
  let clean: InputPicture | null = null;
  let label: string | null = null;
  let seed: number | undefined;
  if (main !== null) {
    const r = await readFilePicture(main, null, mainRange);
    mainPicture = r.picture;
    records.push(r.record);
    label = main;
  } else if (a.scene || readsMainInput(scheme)) {
    const noise = a.noise !== undefined ? numberArg(a.noise, '--noise', usage) : undefined;
    const s = makeInput(a.scene ?? 'survey', { ...(a.size ?? {}), ...(noise !== undefined ? { noise } : {}), ...(a.seed !== undefined ? { seed: wholeArg(a.seed, '--seed', 0, usage) } : {}) });
    mainPicture = s.noisy;
    clean = s.clean;
    seed = s.seed;
    label = `scene:${s.name}`;
    records.push({ name: null, source: label, width: s.noisy.width, height: s.noisy.height, noise: s.noise, seed: s.seed });
  }
  const namedPictures = new Map<string, InputPicture>();
  for (const [name, spec] of named) {
    if (spec.startsWith('scene:')) {
      // Generated named inputs take the main picture's size and are noise-free (a mask is a mask).
      const size = mainPicture ? { width: mainPicture.width, height: mainPicture.height } : a.size ?? {};
      const s = makeInput(spec.slice('scene:'.length), { ...size, noise: 0 });
      namedPictures.set(name, s.clean ?? s.noisy);
      records.push({ name, source: `scene:${s.name}`, width: s.noisy.width, height: s.noisy.height, noise: 0, seed: s.seed });
    } else {
      const r = await readFilePicture(spec, name, namedRanges.get(name));
      namedPictures.set(name, r.picture);
      records.push(r.record);
    }
  }
  const hint = (name: string | null): string => (name === null
    ? ' (give --input PATH or --scene NAME)'
    : ` (give --input ${name}=PATH, or --input ${name}=scene:mask for the generated mask)`);
  const fieldImages = bindInputs(scheme, { main: mainPicture, named: namedPictures }, hint);
  // PSNR/SSIM compare the picture field with the clean scene in that field's channel.
  const pictureField = scheme.fields.find(f => f.init.kind === 'image' && f.init.input === null);
  const reference = clean && pictureField && pictureField.init.kind === 'image' ? channelImage(clean, pictureField.init.channel) : null;
  return { fieldImages, image: mainPicture ? channelImage(mainPicture, null) : null, reference, records, label, ...(seed !== undefined ? { seed } : {}) };
}

/** Prints an input failure the way `check` prints diagnostics (file:line:col severity code message) and returns the exit code; rethrows anything else. */
export function inputFailure(command: string, file: string, err: unknown): number {
  if (err instanceof InputBindingError) {
    const at = err.range ? `${file}:${err.range.start.line}:${err.range.start.column} ` : `${file}: `;
    process.stderr.write(`${at}error ${err.code} ${err.message}\n`);
    return 1;
  }
  if (err instanceof ImageError) {
    process.stderr.write(`fluxel ${command}: ${err.message}\n`);
    // An unknown scene or a nonsensical option is wrong usage; a bad file is bad input.
    return err.code === 'bad-option' ? 2 : 1;
  }
  const code = (err as NodeJS.ErrnoException | null)?.code;
  if (typeof code === 'string' && (err as NodeJS.ErrnoException).path) {
    process.stderr.write(`fluxel ${command}: cannot read ${(err as NodeJS.ErrnoException).path}: ${code}\n`);
    return 1;
  }
  throw err;
}
