// Public pure surface of src/images: codecs for bytes, generated scenes and the value types.
// Re-exports only and no Node file access; the fs-based helpers are imported from './files' directly.

export * from './types';
export { LUMA_709 } from './values';
export { decodeImage, decodeGrey, encodeImage, formatFromExtension, readImageSize, sniffFormat } from './codec';
export type { EncodeOptions } from './codec';
export { makeScene, listScenes } from './scenes';
export type { Scene, SceneName, SceneOptions } from './scenes';
