// Entry point of the live run's analysis thread (bundled as dist/preview-analysis.js): the stability analysis can
// take a few hundred milliseconds, which must never block the extension host, so it runs here, as do the weights
// at a picked pixel, the impulse response, scene generation and image decoding, the A/B metrics, the frequency map,
// the modified equation and the influence map. Must not import vscode or the DOM.

import { parentPort } from 'node:worker_threads';
import type { FromAnalysis, ToAnalysis } from './analysisProtocol';
import { compareResult, computeApproximates, computeImpulse, computeInfluence, computeSpectrum, computeVerdict, computeWeights, decodePicture, scenePictures } from './analysisCompute';

function answer(msg: ToAnalysis.Type): FromAnalysis.Type {
  try {
    switch (msg.type) {
      case 'verdict': return { type: 'verdict', id: msg.id, ...computeVerdict(msg.text, msg.knobs) };
      case 'weights': return {
        type: 'weights', id: msg.id,
        weights: computeWeights(msg.text, msg.knobs, { fields: msg.fields, width: msg.width, height: msg.height, t: msg.t }, msg.x, msg.y, msg.field),
      };
      case 'impulse': return { type: 'impulse', id: msg.id, impulse: computeImpulse(msg.text, msg.knobs, msg.steps) };
      case 'scene': return { type: 'scene', id: msg.id, ...scenePictures(msg.scene, msg.noise, msg.seed, msg.size) };
      case 'decode': return { type: 'decode', id: msg.id, picture: decodePicture(msg.bytes, msg.range) };
      case 'compare': return { type: 'compare', id: msg.id, compare: compareResult(msg.result, msg.reference, msg.pinned) };
      case 'spectrum': return { type: 'spectrum', id: msg.id, spectrum: computeSpectrum(msg.text, msg.knobs, msg.at) };
      case 'approximates': return { type: 'approximates', id: msg.id, approximates: computeApproximates(msg.text, msg.knobs, msg.at) };
      case 'influence': return { type: 'influence', id: msg.id, influence: computeInfluence(msg) };
    }
  } catch (err) {
    return { type: 'error', id: (msg as { id: number }).id, message: err instanceof Error ? err.message : String(err) };
  }
}

parentPort?.on('message', (msg: ToAnalysis.Type) => {
  if (!msg || typeof msg !== 'object' || typeof msg.id !== 'number') return;
  const a = answer(msg);
  // Pictures travel back by transfer, not by copy.
  const transfer = a.type === 'scene' ? [a.noisy.data.buffer, a.clean.data.buffer] : a.type === 'decode' ? [a.picture.data.buffer]
    : a.type === 'spectrum' ? [a.spectrum.amp.buffer] : a.type === 'influence' ? [a.influence.data.buffer] : [];
  parentPort?.postMessage(a, transfer as ArrayBuffer[]);
});
