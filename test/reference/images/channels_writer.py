# Writes colour and alpha image files with PIL and numpy and prints, as JSON, the channel values a reader must
# get (sample / (2^bits - 1)), the BT.709 luma of them, and the alpha. Used by channels.test.ts; run with Debian's
# /usr/bin/python3 (numpy, PIL). Also reads back an RGB PNG we wrote (argument 2) and prints its samples.
# Usage: channels_writer.py OUT_DIR [OURS.png]
import json
import sys

import numpy as np
from PIL import Image

out = sys.argv[1]
H, W = 13, 19  # odd and non-square, so a transposed reading cannot pass
y, x = np.mgrid[0:H, 0:W]
# BT.709 luma weights, ITU-R BT.709-6 (2015) item 3.2, on the [0, 1] values without linearisation.
LUMA = np.array([0.2126, 0.7152, 0.0722])

r = (x * 13 + y * 3) % 256
g = (y * 19 + 7) % 256
b = (x * y * 5) % 256
a = (x * 17 + y * 29) % 256
rgba = np.stack([r, g, b, a], axis=-1).astype(np.uint8)
cases = {}


def add(name, chans, alpha):
    rgb = np.stack(chans, axis=-1).astype(np.float64)
    cases[name] = {
        "red": rgb[..., 0].ravel().tolist(),
        "green": rgb[..., 1].ravel().tolist(),
        "blue": rgb[..., 2].ravel().tolist(),
        "luma": (rgb @ LUMA).ravel().tolist(),
        "alpha": np.asarray(alpha, dtype=np.float64).ravel().tolist(),
    }


Image.fromarray(rgba, "RGBA").save(f"{out}/rgba8.png")
add("rgba8.png", [r / 255, g / 255, b / 255], a / 255)

Image.fromarray(rgba[..., :3], "RGB").save(f"{out}/rgb8.png")
add("rgb8.png", [r / 255, g / 255, b / 255], np.ones((H, W)))

la = np.stack([g, a], axis=-1).astype(np.uint8)
Image.fromarray(la, "LA").save(f"{out}/la8.png")
add("la8.png", [g / 255, g / 255, g / 255], a / 255)

# A palette picture with per-entry transparency (tRNS): PIL's own RGBA conversion is the reference.
pal = Image.fromarray(((x + y) % 4).astype(np.uint8), "P")
pal.putpalette([250, 10, 20, 10, 200, 30, 30, 40, 220, 128, 128, 128] + [0] * (256 * 3 - 12))
pal.info["transparency"] = bytes([255, 0, 128, 255])
pal.save(f"{out}/pal.png", transparency=bytes([255, 0, 128, 255]))
conv = np.asarray(Image.open(f"{out}/pal.png").convert("RGBA")).astype(np.float64) / 255
add("pal.png", [conv[..., 0], conv[..., 1], conv[..., 2]], conv[..., 3])

# An RGB TIFF through PIL (8-bit, uncompressed).
Image.fromarray(rgba[..., :3], "RGB").save(f"{out}/rgb8.tif")
add("rgb8.tif", [r / 255, g / 255, b / 255], np.ones((H, W)))

result = {"cases": cases}
if len(sys.argv) > 2:
    im = Image.open(sys.argv[2])
    result["ours"] = {"mode": im.mode, "size": list(im.size), "samples": np.asarray(im).astype(np.int64).ravel().tolist()}
print(json.dumps(result))
