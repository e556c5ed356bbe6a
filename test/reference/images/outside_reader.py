# Reads image files written by Fluxel with outside readers and prints what they see, as JSON.
# PNG/PGM through PIL, TIFF through tifffile and PIL, PFM parsed with numpy following the Netpbm PFM description
# (header "Pf"/"PF", "width height", scale whose sign gives the byte order; rows stored bottom to top).
# Usage: outside_reader.py FILE...   (run with Debian's /usr/bin/python3)
import json
import sys

import numpy as np
import tifffile
from PIL import Image


def read_pfm(path):
    with open(path, "rb") as f:
        data = f.read()
    # Four whitespace-separated header tokens: magic, width, height, scale.
    tokens, i = [], 0
    while len(tokens) < 4:
        while data[i:i + 1].isspace():
            i += 1
        j = i
        while not data[j:j + 1].isspace():
            j += 1
        tokens.append(data[i:j])
        i = j
    i += 1  # exactly one whitespace byte ends the header
    magic, w, h, scale = tokens[0], int(tokens[1]), int(tokens[2]), float(tokens[3])
    assert magic in (b"Pf", b"PF")
    dtype = "<f4" if scale < 0 else ">f4"  # negative scale: little-endian
    ch = 3 if magic == b"PF" else 1
    arr = np.frombuffer(data[i:i + w * h * ch * 4], dtype=dtype).reshape(h, w, ch)[..., 0]
    return np.flipud(arr), {"magic": magic.decode(), "scale": scale}


out = {}
for path in sys.argv[1:]:
    res = {}
    if path.endswith(".pfm"):
        arr, info = read_pfm(path)
        res.update(info)
        res["values"] = arr.astype(np.float64).ravel().tolist()
        res["shape"] = list(arr.shape)
    elif path.endswith(".tif"):
        t = tifffile.imread(path)
        res["tifffile_dtype"] = str(t.dtype)
        res["shape"] = list(t.shape)
        res["values"] = t.astype(np.float64).ravel().tolist()
        im = Image.open(path)
        res["pil_mode"] = im.mode
        res["pil_values"] = np.asarray(im).astype(np.float64).ravel().tolist()
    else:
        im = Image.open(path)
        res["pil_format"] = im.format
        res["pil_mode"] = im.mode
        arr = np.asarray(im)
        res["shape"] = list(arr.shape)
        res["values"] = arr.astype(np.float64).ravel().tolist()
    out[path] = res
print(json.dumps(out))
