#!/usr/bin/python3
"""An independent implementation of allot's randomisation, allot-pcg-v1,
written from its description in randomize/randomize.go (and README) alone,
to show that the description suffices to re-derive a layout.

    /usr/bin/python3 testdata/reference/allot_pcg_v1.py

Writes layouts_pcg_v1.json beside itself: for a few plans, each unit's
block, position and treatment index (and measurement order, and blind
codes), which randomize's tests compare with the Go implementation.
"""
import json
import os

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


def layout(seed, reps, blocks, order=False, block_sizes=None):
    """Plans without a unit list; block_sizes gives unit-list RCBD blocks."""
    nt = len(reps)
    units = []
    for b in range(1, blocks + 1):
        src = stream(seed, b)
        if block_sizes:
            size = block_sizes[b - 1]
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
        for k, t in enumerate(slots):
            units.append({"block": b, "position": k + 1, "treatment": t, "order": ords[k] if ords else 0})
    return units


CASES = [
    {"name": "rcbd 3x2 seed 42", "seed": 42, "reps": [1, 1, 1], "blocks": 2},
    {"name": "crd unequal seed 3", "seed": 3, "reps": [4, 3, 3], "blocks": 1},
    {"name": "rcbd 6x4 with order seed 20261201", "seed": 20261201, "reps": [1] * 6, "blocks": 4, "order": True},
    {"name": "generalised 4x2 reps 2 seed 18446744073709551615", "seed": 18446744073709551615, "reps": [2] * 4, "blocks": 2},
    {"name": "unit list blocks 4,3,5 seed 7", "seed": 7, "reps": [1, 1, 1], "blocks": 3, "block_sizes": [4, 3, 5]},
]


def main():
    out = []
    for c in CASES:
        units = layout(c["seed"], c["reps"], c["blocks"], c.get("order", False), c.get("block_sizes"))
        out.append(dict(c, units=units, codes=codes(c["seed"], len(c["reps"]))))
    with open(os.path.join(os.path.dirname(os.path.abspath(__file__)), "layouts_pcg_v1.json"), "w") as f:
        json.dump({"source": "allot_pcg_v1.py, an implementation from the documentation", "cases": out}, f, indent=1)
    print("%d layouts" % len(out))


if __name__ == "__main__":
    main()
