"""Frame decoding of `noise-budget frame` compared with Pillow on the same PNG and TIFF files.

Two kinds of file, each checked against the numpy array it was made from, sample for sample:

- files Pillow writes itself (PNG 8/16-bit with its own per-row filter choice; TIFF 8/16-bit,
  uncompressed, LZW, Adobe Deflate and PackBits, predictor 2 through libtiff, several strips,
  big-endian uncompressed, BigTIFF);
- files built here byte by byte for what Pillow does not write (every PNG filter type forced,
  Adam7 interlacing, an sBIT chunk, IDAT split in several chunks; big-endian compressed TIFF,
  tiles with partial edge tiles, old Deflate 32946), each first read back by Pillow (libtiff,
  libpng-compatible readers) and required to equal the array, so that Pillow, not this script,
  vouches that the file is valid.

The references are the numpy arrays and Pillow's readers (a general-purpose library decoding
the same files); the sizes and contents are chosen (common practice, no source). Also checks
that colour files are refused with exit status 2.

Run by scripts/test with the project's .venv. Prints 'N passed, M failed' as its last line and
exits non-zero when anything failed or nothing was checked.
"""

import io
import json
import os
import pathlib
import struct
import subprocess
import sys
import tempfile
import zlib

import numpy as np
from PIL import Image

ROOT = pathlib.Path(__file__).resolve().parents[2]

passed = 0
failed = 0


def check(ok, what):
    global passed, failed
    if ok:
        passed += 1
    else:
        failed += 1
        print("FAIL:", what)


def command():
    """The noise-budget binary: NOISE_BUDGET_BIN, else built once here (debug)."""
    exe = os.environ.get("NOISE_BUDGET_BIN")
    if exe:
        return exe
    subprocess.run(["cargo", "build", "--quiet", "--locked", "-p", "noise-budget"], cwd=ROOT, check=True)
    target = pathlib.Path(os.environ.get("CARGO_TARGET_DIR", ROOT / "target"))
    return str(target / "debug" / "noise-budget")


EXE = None


def engine_reads(path, tmp):
    """(exit status, info JSON or stderr, samples as a uint16 array or None)."""
    raw = tmp / (path.name + ".raw")
    r = subprocess.run([EXE, "frame", "--raw", str(raw), str(path)], capture_output=True, text=True)
    if r.returncode != 0:
        return r.returncode, r.stderr, None
    info = json.loads(r.stdout)
    samples = np.frombuffer(raw.read_bytes(), dtype="<u2").reshape(info["height"], info["width"])
    return 0, info, samples


def same_as_engine(path, tmp, want, bits, what, msb_bits=None):
    code, info, got = engine_reads(path, tmp)
    check(code == 0, f"{what}: exit status {code}: {info}")
    if code != 0:
        return
    check(info["sample_bits"] == bits, f"{what}: sample_bits {info['sample_bits']}, want {bits}")
    check(info["msb_bits"] == msb_bits, f"{what}: msb_bits {info['msb_bits']}, want {msb_bits}")
    check(got.shape == want.shape and np.array_equal(got, want.astype(np.uint16)),
          f"{what}: samples differ from numpy's ({got.shape} against {want.shape})")


def pillow_reads(path):
    with Image.open(path) as im:
        im.load()
        return np.array(im).astype(np.uint32)


def valid_by_pillow(path, want, what):
    """A file built here must read back in Pillow as the array it was made from."""
    try:
        got = pillow_reads(path)
    except Exception as e:  # Pillow refusing the file is this script's bug
        check(False, f"{what}: Pillow cannot read the file built here: {e}")
        return False
    ok = got.shape == want.shape and np.array_equal(got, want.astype(np.uint32))
    check(ok, f"{what}: Pillow reads the file built here differently")
    return ok


# ---- contents (chosen) --------------------------------------------------------------------

def contents(h, w, bits, seed):
    """Images whose rows favour different PNG filters: noise, ramps, stripes, flat, steps."""
    rng = np.random.default_rng(seed)
    top = (1 << bits) - 1
    y, x = np.mgrid[0:h, 0:w]
    return {
        "noise": rng.integers(0, top + 1, size=(h, w)),
        "ramp-x": (x * 37 + y) % (top + 1),
        "ramp-y": (y * 251 + x // 3) % (top + 1),
        "stripes": np.where((x // 2) % 2 == 0, top, 0) ^ (y % 3),
        "flat": np.full((h, w), top // 3),
        "diagonal": ((x + y) * (top // max(w + h, 1))) % (top + 1),
        "extremes": np.where((x + y) % 2 == 0, top, 0),
    }


# ---- PNG built here -------------------------------------------------------------------------

def png_chunk(kind, data):
    body = kind + data
    return struct.pack(">I", len(data)) + body + struct.pack(">I", zlib.crc32(body) & 0xFFFFFFFF)


def paeth(a, b, c):
    p = a + b - c
    pa, pb, pc = abs(p - a), abs(p - b), abs(p - c)
    if pa <= pb and pa <= pc:
        return a
    return b if pb <= pc else c


def filter_rows(img, bits, choose):
    """PNG filtering (ISO/IEC 15948 §9.2) of img's rows; choose(row index) gives the type."""
    bpp = bits // 8
    raw = img.astype(">u2" if bits == 16 else "u1")
    out = bytearray()
    prev = bytes(raw.shape[1] * bpp)
    for i, row in enumerate(raw):
        cur = row.tobytes()
        t = choose(i)
        f = bytearray()
        for j, v in enumerate(cur):
            a = cur[j - bpp] if j >= bpp else 0
            b = prev[j]
            c = prev[j - bpp] if j >= bpp else 0
            pred = [0, a, b, (a + b) // 2, paeth(a, b, c)][t]
            f.append((v - pred) & 0xFF)
        out += bytes([t]) + f
        prev = cur
    return bytes(out)


ADAM7 = [(0, 0, 8, 8), (4, 0, 8, 8), (0, 4, 4, 8), (2, 0, 4, 4), (0, 2, 2, 4), (1, 0, 2, 2), (0, 1, 1, 2)]


def png_built(img, bits, choose, interlace=False, sbit=None, idat_pieces=1):
    h, w = img.shape
    if interlace:
        data = b"".join(
            filter_rows(img[y0::dy, x0::dx], bits, choose)
            for x0, y0, dx, dy in ADAM7
            if img[y0::dy, x0::dx].size
        )
    else:
        data = filter_rows(img, bits, choose)
    z = zlib.compress(data, 9)
    step = max(1, -(-len(z) // idat_pieces))
    idats = b"".join(png_chunk(b"IDAT", z[i:i + step]) for i in range(0, len(z), step))
    ihdr = struct.pack(">IIBBBBB", w, h, bits, 0, 0, 0, 1 if interlace else 0)
    extra = png_chunk(b"sBIT", bytes([sbit])) if sbit else b""
    text = png_chunk(b"tEXt", b"Comment\0built by test_frame_decoders.py")
    return b"\x89PNG\r\n\x1a\n" + png_chunk(b"IHDR", ihdr) + text + extra + idats + png_chunk(b"IEND", b"")


def png_filters_used(data):
    """The filter types of a non-interlaced greyscale PNG's rows (for the coverage line)."""
    pos, z, head = 8, b"", None
    while pos < len(data):
        (n,) = struct.unpack(">I", data[pos:pos + 4])
        kind = data[pos + 4:pos + 8]
        if kind == b"IHDR":
            head = struct.unpack(">IIBBBBB", data[pos + 8:pos + 21])
        if kind == b"IDAT":
            z += data[pos + 8:pos + 8 + n]
        pos += 12 + n
    w, h, bits = head[0], head[1], head[2]
    raw = zlib.decompress(z)
    stride = 1 + w * bits // 8
    return {raw[i * stride] for i in range(h)}


# ---- TIFF built here ------------------------------------------------------------------------

def packbits(row):
    """PackBits (TIFF 6.0 §9): runs of 3 or more as replicate runs, the rest as literals."""
    out, i, n = bytearray(), 0, len(row)
    while i < n:
        j = i
        while j + 1 < n and row[j + 1] == row[i] and j + 1 - i < 127:
            j += 1
        if j - i >= 2:
            out += bytes([257 - (j - i + 1), row[i]])
            i = j + 1
            continue
        start = i
        while i < n and i - start < 128:
            if i + 2 < n and row[i] == row[i + 1] == row[i + 2]:
                break
            i += 1
        out += bytes([i - start - 1]) + bytes(row[start:i])
    return bytes(out)


def lzw(data):
    """TIFF LZW (TIFF 6.0 §13): MSB-first codes of 9 to 12 bits, Clear first, width growing one
    code early, Clear again before the table fills, EOI last."""
    acc, nacc, out = 0, 0, bytearray()

    def emit(code, width):
        nonlocal acc, nacc
        acc = (acc << width) | code
        nacc += width
        while nacc >= 8:
            nacc -= 8
            out.append((acc >> nacc) & 0xFF)

    def width_for(next_code):
        return 9 if next_code < 512 else 10 if next_code < 1024 else 11 if next_code < 2048 else 12

    table = {bytes([i]): i for i in range(256)}
    next_code = 258
    emit(256, 9)
    w = b""
    for c in data:
        wc = w + bytes([c])
        if wc in table:
            w = wc
            continue
        emit(table[w], width_for(next_code))
        table[wc] = next_code
        next_code += 1
        if next_code == 4094:
            emit(256, width_for(next_code))
            table = {bytes([i]): i for i in range(256)}
            next_code = 258
        w = bytes([c])
    if w:
        emit(table[w], width_for(next_code))
        next_code += 1
    emit(257, width_for(next_code))
    if nacc:
        out.append((acc << (8 - nacc)) & 0xFF)
    return bytes(out)


def tiff_built(img, bits, order, compression, predictor=1, rows_per_strip=None, tile=None):
    """A classic TIFF of one greyscale image: header, chunks, arrays, IFD last."""
    h, w = img.shape
    e = "<" if order == "II" else ">"
    dt = np.dtype(e + ("u2" if bits == 16 else "u1"))
    if tile:
        tw, tl = tile
        ph, pw = -(-h // tl) * tl, -(-w // tw) * tw
        padded = np.zeros((ph, pw), dtype=np.int64)
        padded[:h, :w] = img
        chunks = [padded[ty:ty + tl, tx:tx + tw] for ty in range(0, ph, tl) for tx in range(0, pw, tw)]
    else:
        rps = rows_per_strip or h
        chunks = [img[r:r + rps] for r in range(0, h, rps)]
    blobs = []
    for c in chunks:
        c = np.array(c, dtype=np.int64)
        if predictor == 2:
            c = np.concatenate([c[:, :1], np.diff(c, axis=1)], axis=1) % (1 << bits)
        raw = c.astype(dt).tobytes()
        if compression in (8, 32946):
            raw = zlib.compress(raw)
        elif compression == 5:
            raw = lzw(raw)
        elif compression == 32773:
            stride = c.shape[1] * dt.itemsize
            raw = b"".join(packbits(raw[i:i + stride]) for i in range(0, len(raw), stride))
        blobs.append(raw)
    out = bytearray(order.encode() + struct.pack(e + "H", 42) + b"\0\0\0\0")
    offsets = []
    for b in blobs:
        offsets.append(len(out))
        out += b
        if len(out) % 2:
            out += b"\0"
    SHORT, LONG = 3, 4
    entries = {256: (LONG, [w]), 257: (LONG, [h]), 258: (SHORT, [bits]), 259: (SHORT, [compression]),
               262: (SHORT, [1]), 277: (SHORT, [1]), 284: (SHORT, [1]), 317: (SHORT, [predictor])}
    counts = [len(b) for b in blobs]
    if tile:
        entries.update({322: (LONG, [tile[0]]), 323: (LONG, [tile[1]]), 324: (LONG, offsets), 325: (LONG, counts)})
    else:
        entries.update({273: (LONG, offsets), 278: (LONG, [rows_per_strip or h]), 279: (LONG, counts)})
    packed = {}
    for tag, (ty, vals) in entries.items():
        data = struct.pack(e + ("H" if ty == SHORT else "I") * len(vals), *vals)
        if len(data) > 4:
            packed[tag] = (ty, len(vals), struct.pack(e + "I", len(out)))
            out += data
        else:
            packed[tag] = (ty, len(vals), data.ljust(4, b"\0"))
    ifd = len(out)
    out[4:8] = struct.pack(e + "I", ifd)
    out += struct.pack(e + "H", len(packed))
    for tag in sorted(packed):
        ty, n, v = packed[tag]
        out += struct.pack(e + "HHI", tag, ty, n) + v
    out += b"\0\0\0\0"
    return bytes(out)


def pillow_tiff(img, bits, order="II", **options):
    mode = "L" if bits == 8 else ("I;16B" if order == "MM" else "I;16")
    raw = img.astype("u1" if bits == 8 else (">u2" if order == "MM" else "<u2")).tobytes()
    buf = io.BytesIO()
    Image.frombytes(mode, (img.shape[1], img.shape[0]), raw).save(buf, format="TIFF", **options)
    return buf.getvalue()


def pillow_png(img, bits):
    buf = io.BytesIO()
    if bits == 8:
        Image.fromarray(img.astype(np.uint8)).save(buf, format="PNG")
    else:
        Image.frombytes("I;16", (img.shape[1], img.shape[0]), img.astype("<u2").tobytes()).save(buf, format="PNG")
    return buf.getvalue()


def main():
    global EXE
    EXE = command()
    sizes = [(1, 1), (3, 5), (17, 9), (64, 33)]
    files = 0
    with tempfile.TemporaryDirectory() as tmpdir:
        tmp = pathlib.Path(tmpdir)

        def engine_check(name, data, want, bits, msb_bits=None, built=False):
            nonlocal files
            path = tmp / name
            path.write_bytes(data)
            if built and not valid_by_pillow(path, want, name):
                return
            same_as_engine(path, tmp, want, bits, name, msb_bits)
            files += 1

        # PNG written by Pillow.
        filters = set()
        for bits in (8, 16):
            for h, w in sizes:
                for kind, img in contents(h, w, bits, seed=h * w + bits).items():
                    data = pillow_png(img, bits)
                    filters |= png_filters_used(data)
                    engine_check(f"pil-{kind}-{w}x{h}-{bits}.png", data, img, bits)
        print(f"filter types in the PNG rows Pillow wrote: {sorted(filters)}")

        # PNG built here: each filter type forced, mixed filters, Adam7, sBIT, IDAT pieces.
        for bits in (8, 16):
            for h, w in sizes + [(8, 8), (9, 10)]:
                img = contents(h, w, bits, seed=7 * h + w)["noise"]
                for t in range(5):
                    engine_check(f"filter{t}-{w}x{h}-{bits}.png", png_built(img, bits, lambda i, t=t: t), img, bits,
                                 built=True)
                for kind, img2 in contents(h, w, bits, seed=h + w).items():
                    engine_check(f"adam7-{kind}-{w}x{h}-{bits}.png",
                                 png_built(img2, bits, lambda i: i % 5, interlace=True, idat_pieces=3),
                                 img2, bits, built=True)
        img = contents(33, 64, 16, seed=1)["noise"] & 0xFFF0
        engine_check("sbit12.png", png_built(img, 16, lambda i: 4, sbit=12), img, 16, msb_bits=12, built=True)
        engine_check("sbit16.png", png_built(img, 16, lambda i: 4, sbit=16), img, 16, msb_bits=None, built=True)

        # TIFF written by Pillow (its own writer for uncompressed, libtiff for the rest).
        for bits in (8, 16):
            for h, w in sizes:
                for kind, img in contents(h, w, bits, seed=3 * h + w + bits).items():
                    for comp in ("raw", "tiff_lzw", "tiff_adobe_deflate", "packbits"):
                        engine_check(f"pil-{kind}-{w}x{h}-{bits}-{comp}.tif",
                                     pillow_tiff(img, bits, compression=comp), img, bits)
                    for comp in ("tiff_lzw", "tiff_adobe_deflate"):
                        engine_check(f"pil-{kind}-{w}x{h}-{bits}-{comp}-pred2.tif",
                                     pillow_tiff(img, bits, compression=comp, tiffinfo={317: 2}), img, bits)
                    if bits == 16:
                        engine_check(f"pil-{kind}-{w}x{h}-mm.tif", pillow_tiff(img, 16, "MM"), img, 16)
                engine_check(f"pil-{w}x{h}-{bits}-big.tif",
                             pillow_tiff(contents(h, w, bits, 5)["noise"], bits, big_tiff=True),
                             contents(h, w, bits, 5)["noise"], bits)
        big = contents(300, 200, 16, seed=9)["noise"]
        for comp in ("raw", "tiff_lzw", "tiff_adobe_deflate", "packbits"):
            engine_check(f"pil-strips-{comp}.tif", pillow_tiff(big, 16, compression=comp, strip_size=4096), big, 16)

        # TIFF built here: both byte orders, every compression, predictor 2, strips and tiles.
        for bits in (8, 16):
            for order in ("II", "MM"):
                for comp in (1, 5, 8, 32946, 32773):
                    for pred in (1, 2):
                        if pred == 2 and comp in (1, 32773):
                            continue
                        for h, w in [(1, 1), (17, 9), (70, 45)]:
                            img = contents(h, w, bits, seed=h + comp + pred)["ramp-x" if pred == 2 else "noise"]
                            tag = f"{order}-{bits}-c{comp}-p{pred}-{w}x{h}"
                            engine_check(f"built-{tag}-strips.tif",
                                         tiff_built(img, bits, order, comp, pred, rows_per_strip=4), img, bits,
                                         built=True)
                            engine_check(f"built-{tag}-tiles.tif",
                                         tiff_built(img, bits, order, comp, pred, tile=(16, 16)), img, bits,
                                         built=True)
        # A long LZW stream: the code width reaches 12 bits and the table is cleared.
        noise = contents(256, 256, 8, seed=11)["noise"]
        engine_check("built-lzw-long.tif", tiff_built(noise, 8, "MM", 5), noise, 8, built=True)

        # Refused: colour.
        buf = io.BytesIO()
        Image.new("RGB", (4, 3)).save(buf, format="PNG")
        (tmp / "rgb.png").write_bytes(buf.getvalue())
        code, err, _ = engine_reads(tmp / "rgb.png", tmp)
        check(code == 2 and "png image is rgb" in err, f"rgb png: {code} {err!r}")
        buf = io.BytesIO()
        Image.new("RGB", (4, 3)).save(buf, format="TIFF")
        (tmp / "rgb.tif").write_bytes(buf.getvalue())
        code, err, _ = engine_reads(tmp / "rgb.tif", tmp)
        check(code == 2 and "tiff image is rgb" in err, f"rgb tiff: {code} {err!r}")

    print(f"frame decoders against Pillow: {files} files, {passed} passed, {failed} failed")
    sys.exit(1 if failed or passed == 0 else 0)


if __name__ == "__main__":
    main()
