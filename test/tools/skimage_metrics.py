#!/usr/bin/python3
# Reference metrics for test/reference/metrics.test.ts, computed with Debian's scikit-image and numpy.
# Run with /usr/bin/python3 (Debian's interpreter; the python3 first on PATH has no scikit-image).
# Usage: skimage_metrics.py DIR. DIR/manifest.json lists cases {name, width, height}; each case has
# DIR/NAME.ref.f64 and DIR/NAME.img.f64 (raw float64 little-endian, row-major, height rows of width).
# Writes DIR/NAME.out.f64 = [mse, psnr, ssim, tv_iso_ref, tv_aniso_ref, energy_ref, min_ref, max_ref, mean_ref]
# and DIR/NAME.map.f64 = skimage's full SSIM map cropped by (win_size - 1) // 2, all raw float64 little-endian,
# so no value passes through decimal text.
import json
import os
import sys

import numpy as np
from skimage.metrics import mean_squared_error, peak_signal_noise_ratio, structural_similarity


def load(path, height, width):
    return np.fromfile(path, dtype='<f8').reshape(height, width)


def tv_and_energy(u):
    # Forward differences with a zero difference across the last column and row (numerics.md "Metrics"),
    # written with np.diff so it shares no code with the TypeScript loops.
    dx = np.diff(u, axis=1, append=u[:, -1:])
    dy = np.diff(u, axis=0, append=u[-1:, :])
    iso = np.sum(np.sqrt(dx * dx + dy * dy))
    aniso = np.sum(np.abs(dx)) + np.sum(np.abs(dy))
    energy = 0.5 * np.sum(dx * dx + dy * dy)
    return iso, aniso, energy


def main():
    root = sys.argv[1]
    with open(os.path.join(root, 'manifest.json')) as f:
        manifest = json.load(f)
    for case in manifest['cases']:
        name, w, h = case['name'], case['width'], case['height']
        ref = load(os.path.join(root, name + '.ref.f64'), h, w)
        img = load(os.path.join(root, name + '.img.f64'), h, w)
        # Non-default arguments, as skimage's docstring says, to follow Wang et al. 2004: gaussian_weights=True
        # (default is a 7x7 uniform window), sigma=1.5, use_sample_covariance=False (default is N/(N-1)).
        mssim, full = structural_similarity(
            ref, img, data_range=1, gaussian_weights=True, sigma=1.5,
            use_sample_covariance=False, full=True)
        pad = 5  # (win_size - 1) // 2 with win_size = 2 * int(3.5 * 1.5 + 0.5) + 1 = 11
        cropped = np.ascontiguousarray(full[pad:h - pad, pad:w - pad], dtype='<f8')
        mse = mean_squared_error(ref, img)
        psnr = peak_signal_noise_ratio(ref, img, data_range=1) if mse > 0 else np.inf
        iso, aniso, energy = tv_and_energy(ref)
        out = np.array([mse, psnr, mssim, iso, aniso, energy, ref.min(), ref.max(), ref.mean()], dtype='<f8')
        out.tofile(os.path.join(root, name + '.out.f64'))
        cropped.tofile(os.path.join(root, name + '.map.f64'))


if __name__ == '__main__':
    main()
