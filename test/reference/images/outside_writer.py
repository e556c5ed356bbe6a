# Writes image files with outside libraries (PIL, tifffile) and prints the values a reader must get, as JSON.
# Used by outside-readers.test.ts; run with Debian's /usr/bin/python3 (numpy, PIL, tifffile).
# Usage: outside_writer.py OUT_DIR
import json
import sys

import numpy as np
import tifffile
from PIL import Image

out = sys.argv[1]
H, W = 17, 23  # odd and non-square, so a transposed or flipped reading cannot pass
y, x = np.mgrid[0:H, 0:W]
# BT.709 luma weights, ITU-R BT.709-6 item 3.2, applied to [0,1] values without linearisation.
LUMA = np.array([0.2126, 0.7152, 0.0722])

grey8 = ((x * 11 + y * 7) % 256).astype(np.uint8)
grey16 = ((x * 2851 + y * 3779) % 65536).astype(np.uint16)
rgb8 = np.stack([(x * 11) % 256, (y * 15) % 256, (x * y * 3) % 256], axis=-1).astype(np.uint8)
flt = ((x - 11.0) * 0.37 + (y - 8.0) ** 2 * 0.011).astype(np.float32)  # negative and above 1 on purpose
smooth = (128 + 60 * np.sin(x / 5.0) * np.cos(y / 4.0)).astype(np.uint8)  # JPEG-friendly content
smooth_rgb = np.stack([smooth, 255 - smooth, np.full_like(smooth, 90)], axis=-1)

cases = {}


def add(name, values, tol, note, channels=None):
    cases[name] = {"values": np.asarray(values, dtype=np.float64).ravel().tolist(), "tol": tol, "note": note}
    if channels is not None:
        cases[name]["channels"] = [np.asarray(c, dtype=np.float64).ravel().tolist() for c in channels]


def luma(rgb, maxval):
    return (rgb.astype(np.float64) / maxval) @ LUMA


# PNG (W3C / ISO/IEC 15948): grey 8 and 16 bit, RGB, RGBA, grey+alpha, palette.
Image.fromarray(grey8, "L").save(f"{out}/grey8.png")
add("grey8.png", grey8 / 255.0, 1e-7, "PIL L -> PNG colour type 0, depth 8")
Image.fromarray(grey16).save(f"{out}/grey16.png")
assert Image.open(f"{out}/grey16.png").mode in ("I;16", "I")
add("grey16.png", grey16 / 65535.0, 1e-7, "PIL I;16 -> PNG colour type 0, depth 16")
Image.fromarray(rgb8, "RGB").save(f"{out}/rgb8.png")
add("rgb8.png", luma(rgb8, 255), 1e-6, "PIL RGB -> PNG colour type 2, BT.709 luma", [rgb8[..., c] / 255.0 for c in range(3)])
rgba = np.concatenate([rgb8, ((x * 9) % 256).astype(np.uint8)[..., None]], axis=-1)
Image.fromarray(rgba, "RGBA").save(f"{out}/rgba8.png")
add("rgba8.png", luma(rgb8, 255), 1e-6, "PIL RGBA -> PNG colour type 6, alpha ignored")
la = np.stack([grey8, ((y * 13) % 256).astype(np.uint8)], axis=-1)
Image.fromarray(la, "LA").save(f"{out}/la8.png")
add("la8.png", grey8 / 255.0, 1e-7, "PIL LA -> PNG colour type 4, alpha ignored")
pal = Image.fromarray(rgb8, "RGB").quantize(colors=16, method=Image.Quantize.MEDIANCUT)
pal.save(f"{out}/palette.png")
pal_rgb = np.asarray(Image.open(f"{out}/palette.png").convert("RGB"))
assert Image.open(f"{out}/palette.png").mode == "P"
add("palette.png", luma(pal_rgb, 255), 1e-6, "PIL P -> PNG colour type 3; expected colours from PIL's own palette lookup")

# JPEG (ITU-T T.81): lossy, so the expected values are PIL's (libjpeg's) own decoding of the same file.
# 4:4:4 (no chroma subsampling) so differing upsampling filters do not dominate the comparison.
Image.fromarray(smooth, "L").save(f"{out}/grey.jpg", quality=95)
add("grey.jpg", np.asarray(Image.open(f"{out}/grey.jpg")) / 255.0, 2 / 255 + 1e-6, "PIL L -> JPEG q95; vs libjpeg decode, IDCT rounding")
Image.fromarray(smooth_rgb, "RGB").save(f"{out}/rgb.jpg", quality=95, subsampling=0)
dec = np.asarray(Image.open(f"{out}/rgb.jpg").convert("RGB"))
add("rgb.jpg", luma(dec, 255), 2 / 255 + 1e-6, "PIL RGB -> JPEG q95 4:4:4; vs libjpeg decode", [dec[..., c] / 255.0 for c in range(3)])

Image.fromarray(smooth, "L").save(f"{out}/progressive.jpg", quality=95, progressive=True)
add("progressive.jpg", np.asarray(Image.open(f"{out}/progressive.jpg")) / 255.0, 2 / 255 + 1e-6, "PIL L -> progressive JPEG q95")

# TIFF 6.0 (Adobe 1992): 8/16-bit unsigned, 32-bit float (SampleFormat 3), both byte orders, compressions.
Image.fromarray(grey16).save(f"{out}/grey16.tif")
add("grey16.tif", grey16 / 65535.0, 1e-7, "PIL I;16 -> TIFF 16-bit little-endian")
Image.fromarray(flt, "F").save(f"{out}/float.tif")
add("float.tif", flt, 0, "PIL F -> TIFF 32-bit float, values unchanged")
tifffile.imwrite(f"{out}/float-be.tif", flt.astype(">f4"), byteorder=">")
add("float-be.tif", flt, 0, "tifffile big-endian 32-bit float")
tifffile.imwrite(f"{out}/grey16-be.tif", grey16, byteorder=">")
add("grey16-be.tif", grey16 / 65535.0, 1e-7, "tifffile big-endian 16-bit")
tifffile.imwrite(f"{out}/float-deflate.tif", flt, compression="zlib")
add("float-deflate.tif", flt, 0, "tifffile Deflate (compression 8) float")
tifffile.imwrite(f"{out}/rgb8.tif", rgb8, photometric="rgb")
add("rgb8.tif", luma(rgb8, 255), 1e-6, "tifffile RGB 8-bit, BT.709 luma", [rgb8[..., c] / 255.0 for c in range(3)])
tifffile.imwrite(f"{out}/grey16-predictor.tif", grey16, compression="zlib", predictor=True)
add("grey16-predictor.tif", grey16 / 65535.0, 1e-7, "tifffile Deflate with horizontal differencing (Predictor 2, TIFF 6.0 section 14)")
tifffile.imwrite(f"{out}/rgb8-predictor.tif", rgb8, photometric="rgb", compression="zlib", predictor=True)
add("rgb8-predictor.tif", luma(rgb8, 255), 1e-6, "tifffile RGB Deflate + Predictor 2")
tifffile.imwrite(f"{out}/grey16-miniswhite.tif", grey16, photometric="miniswhite")
add("grey16-miniswhite.tif", 1 - grey16 / 65535.0, 1e-7, "tifffile WhiteIsZero (PhotometricInterpretation 0): white stays bright")
Image.fromarray(grey8, "L").save(f"{out}/grey8-lzw.tif", compression="tiff_lzw")
add("grey8-lzw.tif", grey8 / 255.0, 1e-7, "PIL/libtiff LZW (compression 5)")
Image.fromarray(grey8, "L").save(f"{out}/grey8-packbits.tif", compression="packbits")
add("grey8-packbits.tif", grey8 / 255.0, 1e-7, "PIL PackBits (compression 32773)")
Image.fromarray(rgb8, "RGB").save(f"{out}/rgb8-deflate.tif", compression="tiff_adobe_deflate")
add("rgb8-deflate.tif", luma(rgb8, 255), 1e-6, "PIL/libtiff Adobe Deflate RGB")

# Netpbm PGM (pgm(5)): P5 8-bit and 16-bit.
Image.fromarray(grey8, "L").save(f"{out}/grey8.pgm")
add("grey8.pgm", grey8 / 255.0, 1e-7, "PIL L -> P5 maxval 255")
Image.fromarray(grey16.astype(np.int32), "I").save(f"{out}/grey16.pgm")
with open(f"{out}/grey16.pgm", "rb") as f:
    assert f.read(2) == b"P5"
add("grey16.pgm", grey16 / 65535.0, 1e-7, "PIL I -> P5 maxval 65535 (big-endian samples)")

print(json.dumps({"width": W, "height": H, "cases": cases}))
