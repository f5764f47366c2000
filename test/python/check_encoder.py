"""
Unit checks of episcope_steps.py's own pieces, run by python-writer.test.ts: the MessagePack
encoder against byte strings taken from the MessagePack specification (Sadayuki Furuhashi,
msgpack.org, spec.md: each format's first byte and layout), the float32 rounding, the column codec
and the snapshot id. Prints one line per group and "ok N" at the end; any failure exits non-zero.
"""
from __future__ import annotations

import hashlib
import math
import os
import struct
import sys
import zlib
from array import array
from typing import Any, Callable, List, Tuple

sys.dont_write_bytecode = True  # leave no __pycache__ beside the writer
sys.path.insert(0, os.path.join(os.path.dirname(__file__), "..", "..", "formats", "python"))
import episcope_steps as es  # noqa: E402

checks = 0


def same(what: str, got: Any, want: Any) -> None:
    global checks
    checks += 1
    if got != want:
        raise AssertionError(f"{what}: got {got!r}, expected {want!r}")


def raises(what: str, kind: type, call: Callable[[], Any], text: str) -> None:
    global checks
    checks += 1
    try:
        call()
    except kind as e:
        if text not in str(e):
            raise AssertionError(f"{what}: message {str(e)!r} does not contain {text!r}") from None
        return
    raise AssertionError(f"{what}: expected {kind.__name__}")


# MessagePack specification, one case per format family (value, bytes as hex).
SPEC_CASES: List[Tuple[Any, str]] = [
    (None, "c0"),  # nil
    (False, "c2"),
    (True, "c3"),
    (0, "00"),  # positive fixint
    (127, "7f"),
    (128, "cc80"),  # uint 8
    (255, "ccff"),
    (256, "cd0100"),  # uint 16
    (65535, "cdffff"),
    (65536, "ce00010000"),  # uint 32
    (2**32 - 1, "ceffffffff"),
    (2**32, "cf0000000100000000"),  # uint 64
    (2**64 - 1, "cfffffffffffffffff"),
    (-1, "ff"),  # negative fixint
    (-32, "e0"),
    (-33, "d0df"),  # int 8
    (-128, "d080"),
    (-129, "d1ff7f"),  # int 16
    (-32768, "d18000"),
    (-32769, "d2ffff7fff"),  # int 32
    (-(2**31), "d280000000"),
    (-(2**31) - 1, "d3ffffffff7fffffff"),  # int 64
    (-(2**63), "d38000000000000000"),
    (1.5, "cb3ff8000000000000"),  # float 64
    (-0.0, "cb8000000000000000"),
    (math.inf, "cb7ff0000000000000"),
    (-math.inf, "cbfff0000000000000"),
    (math.nan, "cb7ff8000000000000"),
    ("", "a0"),  # fixstr
    ("a", "a161"),
    ("é", "a2c3a9"),  # UTF-8, two bytes
    ("x" * 31, "bf" + "78" * 31),
    ("x" * 32, "d920" + "78" * 32),  # str 8
    ("x" * 256, "da0100" + "78" * 256),  # str 16
    ("x" * 65536, "db00010000" + "78" * 65536),  # str 32
    (b"", "c400"),  # bin 8
    (b"\x01\x02", "c4020102"),
    (b"\x00" * 256, "c50100" + "00" * 256),  # bin 16
    (b"\x00" * 65536, "c600010000" + "00" * 65536),  # bin 32
    ([], "90"),  # fixarray
    ([1, [2]], "920191" + "02"),
    (list(range(15)), "9f" + "".join(f"{i:02x}" for i in range(15))),
    (list(range(16)), "dc0010" + "".join(f"{i:02x}" for i in range(16))),  # array 16
    ([0] * 65536, "dd00010000" + "00" * 65536),  # array 32
    ({}, "80"),  # fixmap
    ({"a": 1}, "81a16101"),
    ({"compact": True, "schema": 0}, "82a7636f6d70616374c3a6736368656d6100"),  # the example on msgpack.org
    ({f"k{i:02d}": i for i in range(16)}, "de0010" + "".join(f"a36b{ord(str(i // 10)):02x}{ord(str(i % 10)):02x}{i:02x}" for i in range(16))),  # map 16
]

for value, want in SPEC_CASES:
    same(f"packb({value!r:.40})", es.packb(value).hex(), want)
same("map 32 header", es.packb({f"k{i}": 0 for i in range(65536)})[:5].hex(), "df00010000")
same("a tuple packs as an array", es.packb((1, 2)).hex(), "920102")
same("bytearray packs as bin", es.packb(bytearray(b"\x07")).hex(), "c40107")

raises("uint 64 overflow", ValueError, lambda: es.packb(2**64), "uint 64")
raises("int 64 overflow", ValueError, lambda: es.packb(-(2**63) - 1), "int 64")
raises("non-string key", TypeError, lambda: es.packb({1: 2}), "string keys")
raises("__proto__ key", ValueError, lambda: es.packb({"__proto__": 1}), "__proto__")
raises("a set", TypeError, lambda: es.packb({1, 2}), "not a type")
raises("a lone surrogate", UnicodeEncodeError, lambda: es.packb("\ud800"), "surrogate")
print("msgpack ok")

# float32 rounding as a JavaScript Float32Array does it: nearest, overflow to ±Infinity, NaN kept.
f32 = es._f32_vector([0.1, 1e39, -1e39, 3.4028235677973366e38, math.nan, -math.inf, 2**-150, 16777217], "t", "v", 8, "")
same("float32 bits", f32.tobytes().hex(), "cdcccc3d" "0000807f" "000080ff" "0000807f" "0000c07f" "000080ff" "00000000" "0000804b")
same("from a tuple", es._f32_vector((1, 2.5), "t", "v", 2, "").tolist(), [1.0, 2.5])
same("from array('d')", es._f32_vector(array("d", [0.5, -2]), "t", "v", 2, "").tolist(), [0.5, -2.0])
same("from array('i')", es._f32_vector(array("i", [3, 4]), "t", "v", 2, "").tolist(), [3.0, 4.0])
raises("a string element", ValueError, lambda: es._f32_vector([1, "x"], "step", "state", 2, ""), "step: state[1] is 'x'; expected a number")
raises("bytes are not numbers", ValueError, lambda: es._f32_vector(b"\x00\x00\x80\x3f", "step", "q", 1, ""), "step: q is b'")
print("float32 ok")

# Column codec: shuffle + raw deflate, raw when that does not help (SPEC.md §3).
smooth = array("f", [1.0 + i / 1000 for i in range(256)]).tobytes()
wire = es._array_map("f32", [256], smooth, True)
same("smooth column codec", wire.get("codec"), "shuffle-deflate")
shuffled = zlib.decompress(wire["data"], -15)
same("inflated size", len(shuffled), len(smooth))
same("shuffle: byte b of element i at b·N + i", bytes(shuffled[b * 256 + i] for i in range(256) for b in range(4)), smooth)
noise = os.urandom(64)
same("incompressible column stays raw", es._array_map("f32", [16], noise, True), {"dtype": "f32", "shape": [16], "data": noise})
same("empty column stays raw", es._array_map("f32", [0], b"", True), {"dtype": "f32", "shape": [0], "data": b""})
print("codec ok")

# Snapshot id (SPEC.md §7), recomputed here from the SPEC's words.
w1 = [[0.5, -1.0, 2.0], [0.25, 0.0, -0.125]]
b1 = [0.1, 0.2, 0.3]
w2 = [[1.0], [-1.0], [0.5]]
b2 = [0.0]
h = hashlib.sha256()
for rows, bias, act in ((w1, b1, "relu"), (w2, b2, "linear")):
    h.update(struct.pack("<II", len(rows), len(rows[0])) + act.encode() + b"\x00")
    h.update(struct.pack(f"<{len(rows) * len(rows[0])}f", *[x for r in rows for x in r]))
    h.update(struct.pack(f"<{len(bias)}f", *bias))
by_spec = h.digest()[:8].hex()


def layer_bytes(rows: List[List[float]], bias: List[float], act: str) -> Tuple[int, int, str, bytes, bytes]:
    return (len(rows), len(rows[0]), act, array("f", [x for r in rows for x in r]).tobytes(), array("f", bias).tobytes())


same("snapshot_id", es.snapshot_id([layer_bytes(w1, b1, "relu"), layer_bytes(w2, b2, "linear")]), by_spec)

path = os.path.join(sys.argv[1], "ids.steps")
with es.StepWriter(path, state_dims=[("a", "m"), ("b", "m")], actions=["only"], gamma=0.5, system={"kind": "rover"}, overwrite=True) as w:
    nested = w.snapshot("online", 0, [(w1, b1, "relu"), (w2, b2, "linear")])
    flat = w.snapshot("online", 0, [([x for r in w1 for x in r], b1, "relu", (2, 3)), (array("d", [1, -1, 0.5]), tuple(b2), "linear", (3, 1))])
    as_dicts = w.snapshot("online", 0, [{"weights": w1, "bias": b1, "activation": "relu"}, {"weights": w2, "bias": b2, "activation": "linear"}])
    same("id of nested rows", nested, by_spec)
    same("id of flat lists with shape", flat, by_spec)
    same("id of layer maps", as_dicts, by_spec)
    try:
        import numpy as np

        # A PyTorch-style [outputs][inputs] matrix, transposed: a non-contiguous view.
        torch_style = np.array(w1, dtype=np.float64).T.copy()
        same("id of NumPy arrays", w.snapshot("online", 0, [(torch_style.T, np.array(b1), "relu"), (np.array(w2, dtype=np.float32), np.array(b2), "linear")]), by_spec)
        raises(
            "an untransposed [outputs][inputs] matrix",
            ValueError,
            lambda: w.snapshot("online", 0, [(torch_style, b1, "relu"), (w2, b2, "linear")]),
            "snapshot: layers[0].inputs is 3; expected 2 (the header's state dimensions). Weights are [inputs][outputs]",
        )
        print("numpy ok")
    except ImportError:
        print("numpy not installed: NumPy inputs not checked")
    raises("flat weights without a shape", ValueError, lambda: w.snapshot("online", 0, [([1, 2], [0], "linear")]), "layers[0].weights is flat")
    raises("ragged rows", ValueError, lambda: w.snapshot("online", 0, [([[1], [2, 3]], [0], "linear")]), "layers[0].weights[1] has 2 values; expected 1")
    raises("a shape that disagrees", ValueError, lambda: w.snapshot("online", 0, [([[1], [2]], [0], "linear", (1, 2))]), "layers[0].shape is (1, 2); the weights are 2×1")
    raises("an unknown activation", ValueError, lambda: w.snapshot("online", 0, [([[1], [2]], [0], "gelu")]), "layers[0].activation is 'gelu'; expected one of linear, relu")
    raises("wrong last outputs", ValueError, lambda: w.snapshot("online", 0, [([[1, 1], [2, 2]], [0, 0], "linear")]), "layers[0].outputs is 2; expected 1 (one Q-value per action)")
print("snapshot id ok")
print(f"ok {checks}")
