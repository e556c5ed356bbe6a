# Central differences of scikit-image's metrics with respect to single pixels of the compared image, for
# test/reference/metricGradients.test.ts. Usage: skimage_metric_fd.py DIR W H STEP I1 I2 ...
# Reads DIR/ref.f64 and DIR/img.f64 (row-major float64), prints one JSON object
# { "ssim": [...], "mse": [...], "psnr": [...] } with (m(img + STEP·e_i) − m(img − STEP·e_i)) / (2·STEP) per index.
# Always run with Debian's /usr/bin/python3 (numpy, scikit-image).
import json
import sys

import numpy as np
from skimage.metrics import mean_squared_error, peak_signal_noise_ratio, structural_similarity

d, w, h, step = sys.argv[1], int(sys.argv[2]), int(sys.argv[3]), float(sys.argv[4])
idx = [int(a) for a in sys.argv[5:]]
ref = np.fromfile(d + '/ref.f64', dtype=np.float64).reshape(h, w)
img = np.fromfile(d + '/img.f64', dtype=np.float64).reshape(h, w)


def ssim(a):
    # numerics.md "Metrics": Wang et al. 2004 settings, population statistics.
    return structural_similarity(ref, a, data_range=1, gaussian_weights=True, sigma=1.5, use_sample_covariance=False)


out = {'ssim': [], 'mse': [], 'psnr': []}
for i in idx:
    up = img.copy()
    dn = img.copy()
    up.flat[i] += step
    dn.flat[i] -= step
    out['ssim'].append((ssim(up) - ssim(dn)) / (2 * step))
    out['mse'].append((mean_squared_error(ref, up) - mean_squared_error(ref, dn)) / (2 * step))
    out['psnr'].append((peak_signal_noise_ratio(ref, up, data_range=1) - peak_signal_noise_ratio(ref, dn, data_range=1)) / (2 * step))
print(json.dumps(out))
