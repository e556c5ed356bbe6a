// The heavy half of the extension (the parser, checker, analysis, engine client, images and hover builder), loaded on
// first use with a dynamic import so activation stays cheap. The packaged build puts it in its own file,
// dist/extension-core.js (test/tools/editor-bundle.mjs), so the editor never even compiles it during activation.
// Must not import vscode.

export { parseAndCheck } from '../notation/index';
export { analyseText, runAnalysisWorker } from './analysisWorker';
export { hoverFor } from './hoverText';
export { kernelAt } from '../analysis/kernel';
export { initialState } from '../analysis/stabilityState';

export type Core = typeof import('./core');
export { EngineWorker } from '../engine/worker/workerClient';
export { makeScene } from '../images/scenes';
export { makeMask } from '../images/inputs';
export { encodeImage, formatFromExtension } from '../images/codec';
