#!/usr/bin/python3
"""An independent implementation of allot's randomisation, allot-pcg-v1,
written from its description in randomize/randomize.go (and README) alone,
to show that the description suffices to re-derive a layout.

    /usr/bin/python3 testdata/reference/allot_pcg_v1.py

Writes layouts_pcg_v1.json beside itself: for a few plans, each unit's
block, position and treatment index (and measurement order, and blind
codes), which randomize's tests compare with the Go implementation; and
layouts_strata.json: split plots (step 9) and Latin squares (step 10), with
each unit's main plot, or row and column.
"""
import hashlib
import hmac
import json
import os
import struct

M64 = (1 << 64) - 1
GAMMA = 0x9E3779B97F4A7C15
MUL = 47026247687942121848144207491837523525  # PCG XSL RR 128/64 multiplier
INC = 117397592171526113268558934119004209487  # and increment


def mix(z):
    z &= M64
    z ^= z >> 30
    z = (z * 0xBF58476D1CE4E5B9) & M64
    z ^= z >> 27
    z = (z * 0x94D049BB133111EB) & M64
    z ^= z >> 31
    return z


class PCG:
    def __init__(self, seed):
        self.s = (seed << 64) | seed  # both 64-bit words set to the seed

    def next(self):
        self.s = (self.s * MUL + INC) & ((1 << 128) - 1)
        hi, lo = self.s >> 64, self.s & M64
        x = hi ^ lo
        r = hi >> 58
        return ((x >> r) | (x << (64 - r))) & M64


def stream(seed, b):
    return PCG(mix(seed + b * GAMMA))


def bounded(src, n):
    t = ((1 << 64) - n) % n  # 2^64 mod n
    while True:
        x = src.next()
        if x >= t:
            return x % n


def shuffle(src, s):
    for i in range(len(s) - 1, 0, -1):
        j = bounded(src, i + 1)
        s[i], s[j] = s[j], s[i]


ALPHABET = "ACDEFHJKMNPRTUVWXY3479"


def codes(seed, n):
    src = stream(seed, 1 << 33)
    out = []
    while len(out) < n:
        c = "".join(ALPHABET[bounded(src, len(ALPHABET))] for _ in range(3))
        if c not in out:
            out.append(c)
    return out


class Keyed:
    """Step 6's keyed stream: 64-bit words, little-endian, of
    HMAC-SHA256(secret, "allot-codes-v2" || seed || counter), seed and
    counter as 8-byte little-endian integers, counter 0, 1, 2, ..."""

    def __init__(self, secret, seed):
        self.secret, self.seed, self.counter, self.buf = secret, seed, 0, []

    def next(self):
        if not self.buf:
            msg = b"allot-codes-v2" + struct.pack("<QQ", self.seed, self.counter)
            self.counter += 1
            self.buf = list(struct.unpack("<4Q", hmac.new(self.secret, msg, hashlib.sha256).digest()))
        return self.buf.pop(0)


def code_length(n):
    """The least L >= 3 with 22^L >= 100 n."""
    length = 3
    while len(ALPHABET) ** length < 100 * n:
        length += 1
    return length


def keyed_codes(secret, seed, n):
    src, length = Keyed(secret, seed), code_length(n)
    out, seen = [], set()
    while len(out) < n:
        c = "".join(ALPHABET[bounded(src, len(ALPHABET))] for _ in range(length))
        if c not in seen:
            seen.add(c)
            out.append(c)
    return out


def take_per_block(seed, b, size, k):
    """Step 7: indices (in list order) of the block's units laid out."""
    if not k or size <= k:
        return list(range(size))
    idx = list(range(size))
    shuffle(stream(seed, (1 << 34) + b), idx)
    return sorted(idx[:k])


def place(grid, pos):
    row, col = (pos - 1) // grid["cols"] + 1, (pos - 1) % grid["cols"] + 1
    if grid["numbering"] == "serpentine" and row % 2 == 0:
        col = grid["cols"] - col + 1
    return row, col


def grid_places(seed, b, size, grid):
    """Step 8: the grid place of each position."""
    n = grid["rows"] * grid["cols"]
    places = list(range(1, n + 1))
    if grid.get("placement") == "random" and n > size:
        shuffle(stream(seed, (1 << 35) + b), places)
        places = sorted(places[:size])
    return places[:size]


def layout(seed, reps, blocks, order=False, block_sizes=None, per_block=0, grid=None):
    """Plans without a unit list; block_sizes gives unit-list RCBD blocks."""
    nt = len(reps)
    units, spares = [], []
    for b in range(1, blocks + 1):
        src = stream(seed, b)
        used = None
        if block_sizes:
            used = take_per_block(seed, b, block_sizes[b - 1], per_block)
            spares += [{"block": b, "index": i} for i in range(block_sizes[b - 1]) if i not in used]
            size = len(used)
            slots = [t for _ in range(size // nt) for t in range(nt)]
            r = size % nt
            if r:
                extra = list(range(nt))
                shuffle(src, extra)
                slots += extra[:r]
        else:
            slots = [t for t, r in enumerate(reps) for _ in range(r)]
        shuffle(src, slots)
        ords = None
        if order:
            ords = list(range(1, len(slots) + 1))
            shuffle(stream(seed, (1 << 32) + b), ords)
        places = grid_places(seed, b, len(slots), grid) if grid else None
        for k, t in enumerate(slots):
            u = {"block": b, "position": k + 1, "treatment": t, "order": ords[k] if ords else 0}
            if used is not None and per_block:
                u["index"] = used[k]
            if places:
                u["row"], u["col"] = place(grid, places[k])
            units.append(u)
    return units, spares


def split_plot(seed, a, c, r, blocks, order=False):
    """Step 9: a whole-plot treatments, c sub-plot treatments, r main plots
    per whole-plot treatment in each of blocks blocks."""
    m = a * r
    units = []
    for b in range(1, blocks + 1):
        whole = [i for i in range(a) for _ in range(r)]
        shuffle(stream(seed, b), whole)
        block = []
        for k, i in enumerate(whole):
            g = (b - 1) * m + k + 1
            sub = list(range(c))
            shuffle(stream(seed, (1 << 36) + g), sub)
            for j, sp in enumerate(sub):
                block.append({"block": b, "position": k * c + j + 1, "treatment": i * c + sp, "main_plot": g})
        add_order(seed, b, block, order)
        units += block
    return units


def latin(seed, t, squares, order=False):
    """Step 10: the cyclic square with rows, columns and symbols permuted."""
    units = []
    for b in range(1, squares + 1):
        src = stream(seed, b)
        perms = []
        for _ in range(3):
            p = list(range(t))
            shuffle(src, p)
            perms.append(p)
        rows, cols, syms = perms
        block = [{"block": b, "position": i * t + j + 1, "row": i + 1, "col": j + 1,
                  "treatment": syms[(rows[i] + cols[j]) % t]} for i in range(t) for j in range(t)]
        add_order(seed, b, block, order)
        units += block
    return units


def add_order(seed, b, block, order):
    ords = list(range(1, len(block) + 1))
    if order:
        shuffle(stream(seed, (1 << 32) + b), ords)
    for u, o in zip(block, ords):
        u["order"] = o if order else 0


STRATA_CASES = [
    {"name": "split plot 2 light x 3 variety, 3 chambers each, seed 42", "seed": 42, "design": "split-plot",
     "whole": 2, "sub": 3, "reps": 3, "blocks": 1},
    {"name": "split plot in 4 blocks, 3 x 4, with order, seed 20261201", "seed": 20261201, "design": "split-plot",
     "whole": 3, "sub": 4, "reps": 1, "blocks": 4, "order": True},
    {"name": "split plot 4 whole x 2 sub, 2 cages each, seed 18446744073709551615",
     "seed": 18446744073709551615, "design": "split-plot", "whole": 4, "sub": 2, "reps": 2, "blocks": 1},
    {"name": "latin 4 x 4, seed 7", "seed": 7, "design": "latin", "t": 4, "squares": 1},
    {"name": "latin 5 x 5, 3 squares, with order, seed 2027", "seed": 2027, "design": "latin", "t": 5, "squares": 3,
     "order": True},
    {"name": "latin 3 x 3, seed 1", "seed": 1, "design": "latin", "t": 3, "squares": 2},
]


CASES = [
    {"name": "rcbd 3x2 seed 42", "seed": 42, "reps": [1, 1, 1], "blocks": 2},
    {"name": "crd unequal seed 3", "seed": 3, "reps": [4, 3, 3], "blocks": 1},
    {"name": "rcbd 6x4 with order seed 20261201", "seed": 20261201, "reps": [1] * 6, "blocks": 4, "order": True},
    {"name": "generalised 4x2 reps 2 seed 18446744073709551615", "seed": 18446744073709551615, "reps": [2] * 4, "blocks": 2},
    {"name": "unit list blocks 4,3,5 seed 7", "seed": 7, "reps": [1, 1, 1], "blocks": 3, "block_sizes": [4, 3, 5]},
    # The steps added with secrets, spares and spread grids.
    {"name": "per-treatment codes from a secret, seed 42", "seed": 42, "reps": [1] * 5, "blocks": 3,
     "blind_mode": "treatment", "secret": "00112233445566778899aabbccddeeff00112233445566778899aabbccddeeff"},
    {"name": "per-unit codes from a secret, seed 9", "seed": 9, "reps": [2, 2, 2], "blocks": 2, "order": True,
     "blind_mode": "unit", "secret": "f0e1d2c3b4a5968778695a4b3c2d1e0f"},
    {"name": "litters 5,8,6,7 take 5 each, seed 2027", "seed": 2027, "reps": [1] * 5, "blocks": 4,
     "block_sizes": [5, 8, 6, 7], "per_block": 5},
    {"name": "litters 9,12 take 6 of each, per-unit codes, seed 3", "seed": 3, "reps": [1, 1, 1], "blocks": 2,
     "block_sizes": [9, 12], "per_block": 6, "blind_mode": "unit", "secret": "5a" * 32},
    {"name": "4 treatments on a 3x4 serpentine grid, seed 11", "seed": 11, "reps": [1] * 4, "blocks": 3,
     "grid": {"rows": 3, "cols": 4, "numbering": "serpentine", "placement": "random"}},
    {"name": "unit list blocks 6,4 on a 2x4 grid, seed 5", "seed": 5, "reps": [1, 1], "blocks": 2,
     "block_sizes": [6, 4], "grid": {"rows": 2, "cols": 4, "numbering": "rows", "placement": "random"}},
]


def main():
    out = []
    for c in CASES:
        units, spares = layout(c["seed"], c["reps"], c["blocks"], c.get("order", False), c.get("block_sizes"),
                               c.get("per_block", 0), c.get("grid"))
        case = dict(c, units=units)
        if spares:
            case["spares"] = spares
        mode = c.get("blind_mode")
        if not mode:
            case["codes"] = codes(c["seed"], len(c["reps"]))
        else:
            secret = bytes.fromhex(c["secret"])
            if mode == "treatment":
                case["codes"] = keyed_codes(secret, c["seed"], len(c["reps"]))
            else:
                for u, code in zip(units, keyed_codes(secret, c["seed"], len(units))):
                    u["code"] = code
        out.append(case)
    with open(os.path.join(os.path.dirname(os.path.abspath(__file__)), "layouts_pcg_v1.json"), "w") as f:
        json.dump({"source": "allot_pcg_v1.py, an implementation from the documentation", "cases": out}, f, indent=1)
    print("%d layouts" % len(out))
    strata = []
    for c in STRATA_CASES:
        if c["design"] == "latin":
            units = latin(c["seed"], c["t"], c["squares"], c.get("order", False))
        else:
            units = split_plot(c["seed"], c["whole"], c["sub"], c["reps"], c["blocks"], c.get("order", False))
        strata.append(dict(c, units=units))
    with open(os.path.join(os.path.dirname(os.path.abspath(__file__)), "layouts_strata.json"), "w") as f:
        json.dump({"source": "allot_pcg_v1.py, an implementation from the documentation (steps 9 and 10)",
                   "cases": strata}, f, indent=1)
    print("%d split-plot and Latin layouts" % len(strata))


if __name__ == "__main__":
    main()
