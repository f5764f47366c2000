"""
Write episcope step files (formats/SPEC.md, format version 1) from a Python training loop.

One file, Python 3.9+ standard library only, so that it can be copied next to a training script.
NumPy arrays are accepted when NumPy is installed; this module never imports NumPy itself.

    with StepWriter("run.steps", state_dims=[("position", "m"), ("angle", "rad")],
                    actions=["push left", "push right"], gamma=0.99,
                    system={"kind": "cart-pole", "map": {"position": 0, "angle": 1}}) as rec:
        rec.step(state, action, reward, q, explored=True, epsilon=0.1)
        rec.end_episode(failed=True, reason="mast fell")

It behaves like the TypeScript recorder (src/record/recorder.ts): every call checks its input
completely before it changes anything, so a refused call (a ValueError naming the field, the value
and what was expected) leaves the file and the open step block as they were. A step block is
written every `block_size` steps, at each episode end and at close; each record reaches the
operating system in one write, so a killed process leaves whole records plus at most one partial
record at the end, and every step of a written block stays readable.
"""
from __future__ import annotations

import hashlib
import math
import numbers
import os
import struct
import sys
import zlib
from array import array
from datetime import datetime, timezone
from typing import Any, Dict, Iterable, List, Mapping, NoReturn, Optional, Sequence, Tuple, Union

__all__ = ["StepWriter", "RecordError", "packb", "snapshot_id", "FORMAT_VERSION", "ACTIVATIONS"]

FORMAT_VERSION = 1
ACTIVATIONS = ("linear", "relu", "tanh", "sigmoid", "elu", "softplus")

MAGIC = b"EPISCOPE"

KIND_HEADER = 1
KIND_STEP_BLOCK = 2
KIND_EPISODE_END = 3
KIND_SNAPSHOT = 4
KIND_NOTE = 5
KIND_INDEX = 6
KIND_TRAILER = 7

FLAG_TERMINAL = 1
FLAG_TRUNCATED = 2
FLAG_EXPLORED = 4

CODEC_SHUFFLE_DEFLATE = "shuffle-deflate"

#: A dense layer as the caller gives it: (weights, bias, activation) with weights [inputs][outputs]
#: (nested rows or a 2-D NumPy array), or (flat_weights, bias, activation, (inputs, outputs)).
Layer = Union[Tuple[Any, Any, str], Tuple[Any, Any, str, Tuple[int, int]], Mapping[str, Any]]


class RecordError(ValueError):
    """Bad input to the writer: names the call, the field, the value and what was expected."""

    def __init__(self, call: str, field: str, detail: str) -> None:
        super().__init__(f"{call}: {field} {detail}")
        self.call = call
        self.field = field


# ------------------------------------------------------------------------------ MessagePack
# An encoder for exactly the subset SPEC.md §3 uses, written from the MessagePack specification
# (Sadayuki Furuhashi, msgpack.org, spec.md, the 2013 revision with the str and bin formats). The
# comment beside each branch names the format as the specification does. Numbers and lengths
# inside MessagePack are big-endian, unlike the step file's frames and arrays (little-endian).


def packb(value: Any) -> bytes:
    """One value as MessagePack: nil, bool, int, float (as float 64), str, bin, array, map."""
    parts: List[bytes] = []
    _pack(value, parts)
    return b"".join(parts)


def _pack(value: Any, out: List[bytes]) -> None:
    if value is None:
        out.append(b"\xc0")  # nil
    elif _is_bool(value):
        out.append(b"\xc3" if value else b"\xc2")  # true / false
    elif isinstance(value, numbers.Integral):
        _pack_int(int(value), out)
    elif isinstance(value, numbers.Real):
        # float 64 always: a float 32 would round γ or a return, and NaN/±Infinity pass through as they are.
        out.append(struct.pack(">Bd", 0xCB, float(value)))
    elif isinstance(value, str):
        data = value.encode("utf-8")  # a lone surrogate raises here: MessagePack str is UTF-8
        n = len(data)
        if n <= 31:
            out.append(bytes((0xA0 | n,)))  # fixstr 101xxxxx
        elif n <= 0xFF:
            out.append(struct.pack(">BB", 0xD9, n))  # str 8
        elif n <= 0xFFFF:
            out.append(struct.pack(">BH", 0xDA, n))  # str 16
        else:
            out.append(struct.pack(">BI", 0xDB, _len32(n, "str")))  # str 32
        out.append(data)
    elif isinstance(value, (bytes, bytearray, memoryview)):
        data = bytes(value)
        n = len(data)
        if n <= 0xFF:
            out.append(struct.pack(">BB", 0xC4, n))  # bin 8
        elif n <= 0xFFFF:
            out.append(struct.pack(">BH", 0xC5, n))  # bin 16
        else:
            out.append(struct.pack(">BI", 0xC6, _len32(n, "bin")))  # bin 32
        out.append(data)
    elif isinstance(value, Mapping):
        n = len(value)
        if n <= 15:
            out.append(bytes((0x80 | n,)))  # fixmap 1000xxxx
        elif n <= 0xFFFF:
            out.append(struct.pack(">BH", 0xDE, n))  # map 16
        else:
            out.append(struct.pack(">BI", 0xDF, _len32(n, "map")))  # map 32
        for key, item in value.items():
            if not isinstance(key, str):
                raise TypeError(f"MessagePack map key {key!r}: step files use string keys only (SPEC.md §3)")
            if key == "__proto__":
                # SPEC.md §3: readers treat such a record as corrupt, so never write one.
                raise ValueError('MessagePack map key "__proto__": a reader would treat the record as corrupt (SPEC.md §3)')
            _pack(key, out)
            _pack(item, out)
    elif isinstance(value, (list, tuple)):
        n = len(value)
        if n <= 15:
            out.append(bytes((0x90 | n,)))  # fixarray 1001xxxx
        elif n <= 0xFFFF:
            out.append(struct.pack(">BH", 0xDC, n))  # array 16
        else:
            out.append(struct.pack(">BI", 0xDD, _len32(n, "array")))  # array 32
        for item in value:
            _pack(item, out)
    else:
        raise TypeError(f"{type(value).__name__} {value!r:.60}: not a type a step file stores (SPEC.md §3)")


def _pack_int(v: int, out: List[bytes]) -> None:
    if 0 <= v <= 0x7F:
        out.append(bytes((v,)))  # positive fixint 0xxxxxxx
    elif -32 <= v < 0:
        out.append(struct.pack(">b", v))  # negative fixint 111xxxxx
    elif v > 0:
        if v <= 0xFF:
            out.append(struct.pack(">BB", 0xCC, v))  # uint 8
        elif v <= 0xFFFF:
            out.append(struct.pack(">BH", 0xCD, v))  # uint 16
        elif v <= 0xFFFFFFFF:
            out.append(struct.pack(">BI", 0xCE, v))  # uint 32
        elif v <= 0xFFFFFFFFFFFFFFFF:
            out.append(struct.pack(">BQ", 0xCF, v))  # uint 64
        else:
            raise ValueError(f"integer {v} does not fit MessagePack's uint 64")
    elif v >= -0x80:
        out.append(struct.pack(">Bb", 0xD0, v))  # int 8
    elif v >= -0x8000:
        out.append(struct.pack(">Bh", 0xD1, v))  # int 16
    elif v >= -0x80000000:
        out.append(struct.pack(">Bi", 0xD2, v))  # int 32
    elif v >= -0x8000000000000000:
        out.append(struct.pack(">Bq", 0xD3, v))  # int 64
    else:
        raise ValueError(f"integer {v} does not fit MessagePack's int 64")


def _len32(n: int, what: str) -> int:
    if n > 0xFFFFFFFF:
        raise ValueError(f"a MessagePack {what} holds at most 2^32 - 1 items or bytes, this one {n}")
    return n


# ------------------------------------------------------------------------------ framing (SPEC §2)


def _frame(kind: int, payload: bytes) -> bytes:
    """u32 length | u8 kind | payload | u32 CRC-32 of kind ‖ payload; all little-endian."""
    if len(payload) > 0xFFFFFFFF:
        raise ValueError(f"a record payload holds at most 2^32 - 1 bytes, this one {len(payload)}; use a smaller block_size")
    kind_byte = bytes((kind,))
    crc = zlib.crc32(payload, zlib.crc32(kind_byte)) & 0xFFFFFFFF
    return b"".join((struct.pack("<IB", len(payload), kind), payload, struct.pack("<I", crc)))


# ------------------------------------------------------------------------------ array maps (SPEC §3)

_DTYPE_WIDTH = {"u8": 1, "u16": 2, "u32": 4, "i32": 4, "f32": 4, "f64": 8}


def _typecode(width: int, unsigned: bool = True) -> str:
    """The array typecode of this width: the C types behind 'I' and 'L' differ between platforms."""
    for code in ("BHILQ" if unsigned else "bhilq"):
        if array(code).itemsize == width:
            return code
    raise RuntimeError(f"this Python has no {width}-byte integer array type")


_U32 = _typecode(4)


def _le_bytes(values: array) -> bytes:
    """Raw little-endian bytes of an array, whatever the machine's byte order."""
    if sys.byteorder == "little":
        return values.tobytes()
    swapped = array(values.typecode, values)
    swapped.byteswap()
    return swapped.tobytes()


def _array_map(dtype: str, shape: List[int], raw: bytes, compress: bool = False) -> Dict[str, Any]:
    """An array map {dtype, shape, data, codec?}; compressed columns use `shuffle-deflate`."""
    if not compress or not raw:
        return {"dtype": dtype, "shape": shape, "data": raw}
    width = _DTYPE_WIDTH[dtype]
    # Shuffle: output byte b·N + i is input byte i·w + b, i.e. byte b of every element, for each b.
    shuffled = raw if width == 1 else b"".join(raw[b::width] for b in range(width))
    # Level 1: columns are written on the training loop's hot path, and level 1 gets most of the gain.
    deflater = zlib.compressobj(1, zlib.DEFLATED, -15)  # raw deflate, RFC 1951, no zlib wrapper
    packed = deflater.compress(shuffled) + deflater.flush()
    if len(packed) >= len(raw):
        return {"dtype": dtype, "shape": shape, "data": raw}  # never pay for a codec that loses
    return {"dtype": dtype, "shape": shape, "data": packed, "codec": CODEC_SHUFFLE_DEFLATE}


# ------------------------------------------------------------------------------ input conversion


def _numpy() -> Any:
    """NumPy's module when the caller has imported it (only then can it hand us NumPy arrays)."""
    return sys.modules.get("numpy")


def _is_ndarray(value: Any) -> bool:
    np = _numpy()
    return np is not None and isinstance(value, np.ndarray)


def _array_like(value: Any, call: str, field: str) -> Any:
    """
    A NumPy array for anything that converts to one (a PyTorch tensor on the CPU, for example),
    when NumPy is loaded; otherwise the value as it was.
    """
    np = _numpy()
    if np is None or isinstance(value, (np.ndarray, list, tuple, array)) or not hasattr(value, "__array__"):
        return value
    try:
        return np.asarray(value)
    except Exception as e:  # a tensor on a GPU, or one that needs grad, refuses with its own message
        raise RecordError(
            call, field,
            f"cannot be read as an array ({e}); pass a list or a NumPy array (from a PyTorch tensor: t.detach().cpu().numpy())",
        ) from None


def _is_bool(value: Any) -> bool:
    np = _numpy()
    return isinstance(value, bool) or (np is not None and isinstance(value, np.bool_))


def _is_number(value: Any) -> bool:
    return isinstance(value, numbers.Real) and not _is_bool(value)


def _is_count(value: Any) -> bool:
    return isinstance(value, numbers.Integral) and not _is_bool(value)


def _show(value: Any) -> str:
    text = repr(value)
    return text if len(text) <= 60 else text[:57] + "..."


def _f32_vector(values: Any, call: str, field: str, length: int, why: str) -> array:
    """
    Values as float32 (array 'f'), the way a JavaScript Float32Array stores them: rounded to
    nearest, too-large values become ±Infinity, NaN and ±Infinity are kept.
    """
    values = _array_like(values, call, field)
    if _is_ndarray(values):
        if values.ndim != 1:
            raise RecordError(call, field, f"has shape {tuple(values.shape)}; expected a flat list of {length} values {why}")
        if values.dtype.kind not in "biuf":
            raise RecordError(call, field, f"has dtype {values.dtype}; expected numbers")
        if values.shape[0] != length:
            raise RecordError(call, field, f"has {values.shape[0]} values; expected {length} {why}")
        out = array("f")
        out.frombytes(values.astype(_numpy().float32).tobytes())  # native order, as array('f') holds it
        return out
    if values is None:
        raise RecordError(call, field, f"has no values; expected {length} {why}")
    if isinstance(values, (str, bytes, bytearray, memoryview)) or _is_number(values):
        raise RecordError(call, field, f"is {_show(values)}; expected a list of {length} numbers {why}")
    # array('f', other_array) only accepts an 'f' array; anything else goes through a list.
    items = values if not isinstance(values, array) or values.typecode == "f" else values.tolist()
    try:
        out = array("f", items)
    except (TypeError, ValueError, OverflowError):
        for i, item in enumerate(values):
            if not _is_number(item) or not _fits_double(item):
                raise RecordError(call, f"{field}[{i}]", f"is {_show(item)}; expected a number") from None
        raise RecordError(call, field, f"is {_show(values)}; expected a list of {length} numbers {why}") from None
    if len(out) != length:
        raise RecordError(call, field, f"has {len(out)} values; expected {length} {why}")
    return out


def _fits_double(value: Any) -> bool:
    try:
        float(value)
        return True
    except (OverflowError, TypeError, ValueError):
        return False


def _number(value: Any, call: str, field: str) -> float:
    if not _is_number(value) or not _fits_double(value):
        raise RecordError(call, field, f"is {_show(value)} ({type(value).__name__}); expected a number")
    return float(value)


def _plain_run_info(run: Any) -> Dict[str, Any]:
    """
    Run facts as plain data, as the TypeScript recorder makes them with a JSON round trip: tuples
    become lists, dates ISO strings, NumPy values plain numbers, NaN and ±Infinity nil (JSON has
    none), integer keys strings. So the header holds only types any MessagePack reader decodes.
    """
    if not isinstance(run, Mapping):
        raise RecordError("StepWriter", "run", f"is {_show(run)}; expected a map of facts about the run")

    def plain(value: Any, at: str) -> Any:
        if value is None or isinstance(value, str):
            return value
        if _is_bool(value):
            return bool(value)
        if isinstance(value, numbers.Integral):
            return int(value)
        if isinstance(value, numbers.Real):
            number = float(value)
            return number if math.isfinite(number) else None
        if isinstance(value, Mapping):
            out: Dict[str, Any] = {}
            for key, item in value.items():
                if not isinstance(key, str) and not _is_count(key):
                    raise RecordError("StepWriter", at, f"has the key {_show(key)}; expected string keys")
                out[str(key)] = plain(item, f"{at}.{key}")
            return out
        if isinstance(value, (list, tuple)):
            return [plain(item, f"{at}[{i}]") for i, item in enumerate(value)]
        if hasattr(value, "isoformat"):  # datetime, date, time
            return value.isoformat()
        if hasattr(value, "tolist"):  # NumPy scalars and arrays
            return plain(value.tolist(), at)
        raise RecordError(
            "StepWriter", at,
            f"is of type {type(value).__name__}; expected plain data (numbers, strings, booleans, None, lists, maps)",
        )

    return plain(run, "run")


# ------------------------------------------------------------------------------ snapshot id (SPEC §7)


def snapshot_id(layers: Sequence[Tuple[int, int, str, bytes, bytes]]) -> str:
    """
    SHA-256 over, per layer: u32 inputs, u32 outputs, the activation in UTF-8, one zero byte, the
    weights' raw f32 bytes ([inputs][outputs], row-major), the bias's raw f32 bytes; the id is the
    digest's first 8 bytes as 16 lower-case hex digits. `layers` holds (inputs, outputs,
    activation, weights_le_bytes, bias_le_bytes); StepWriter.snapshot() returns the same id.
    """
    h = hashlib.sha256()
    for inputs, outputs, activation, weights, bias in layers:
        h.update(struct.pack("<II", inputs, outputs))
        h.update(activation.encode("utf-8"))
        h.update(b"\x00")
        h.update(weights)
        h.update(bias)
    return h.digest()[:8].hex()


def _layer_weights(weights: Any, shape: Optional[Tuple[int, int]], at: str) -> Tuple[int, int, array]:
    """(inputs, outputs, float32 values row-major [inputs][outputs]) from what the caller gave."""
    if shape is not None:
        if not (isinstance(shape, (tuple, list)) and len(shape) == 2 and all(_is_count(x) and x >= 0 for x in shape)):
            raise RecordError("snapshot", f"{at}.shape", f"is {_show(shape)}; expected (inputs, outputs)")
        shape = (int(shape[0]), int(shape[1]))
    weights = _array_like(weights, "snapshot", f"{at}.weights")
    if _is_ndarray(weights) and weights.ndim == 2:
        dims = (int(weights.shape[0]), int(weights.shape[1]))
        flat = weights.reshape(-1)  # C order: row-major, whatever the strides (a transposed view included)
    elif not _is_ndarray(weights) and isinstance(weights, (list, tuple)) and weights and not _is_number(weights[0]):
        rows = len(weights)
        first = weights[0]
        width = first.shape[0] if _is_ndarray(first) and first.ndim == 1 else (len(first) if hasattr(first, "__len__") else -1)
        if width < 0:
            raise RecordError("snapshot", f"{at}.weights[0]", f"is {_show(first)}; expected a row of numbers")
        dims = (rows, int(width))
        flat = array("f")
        for i, row in enumerate(weights):
            flat.extend(_f32_vector(row, "snapshot", f"{at}.weights[{i}]", width, "(one per output, like row 0)"))
    else:
        if shape is None:
            raise RecordError(
                "snapshot", f"{at}.weights",
                "is flat; give its shape as a fourth item (weights, bias, activation, (inputs, outputs)), or nested rows [inputs][outputs]",
            )
        dims = shape
        flat = weights
    if shape is not None and shape != dims:
        raise RecordError("snapshot", f"{at}.shape", f"is {shape}; the weights are {dims[0]}×{dims[1]}")
    inputs, outputs = dims
    values = _f32_vector(flat, "snapshot", f"{at}.weights", inputs * outputs, f"({inputs}×{outputs})")
    return inputs, outputs, values


# ------------------------------------------------------------------------------ the writer


class StepWriter:
    """
    Records a deep Q-learning run into a step file, one call per environment step.

    state_dims: [(name, unit), …] (or {"name", "unit"} maps), one per state dimension.
    actions: action names; action i is index i.
    gamma: the discount γ in [0, 1] the agent trains with.
    system: {"kind", "title", "map": {role: state index}, "params": {name: number}}.
    extras: names of extra float32 columns a step may fill (NaN where it does not).
    run: free-form facts about the run (settings, seeds), stored as plain data.
    block_size: steps per step block; at most this many steps are lost when the process is killed.
    compress: byte shuffle + deflate the step columns (SPEC.md §3, `shuffle-deflate`).
    overwrite: replace an existing file; by default an earlier recording is never replaced.
    durable: also fsync at each episode end and at close, for machines that may lose power.
    created_at: the header's createdAt (ISO 8601); by default the time the writer is created.
    """

    def __init__(
        self,
        path: Union[str, "os.PathLike[str]"],
        state_dims: Sequence[Any],
        actions: Sequence[str],
        gamma: float,
        system: Mapping[str, Any],
        extras: Sequence[str] = (),
        run: Optional[Mapping[str, Any]] = None,
        block_size: int = 4096,
        compress: bool = False,
        overwrite: bool = False,
        durable: bool = False,
        created_at: Optional[str] = None,
    ) -> None:
        self.path = os.fspath(path)
        header = self._checked_header(state_dims, actions, gamma, system, extras, {} if run is None else run, created_at)
        if not _is_count(block_size) or block_size < 1:
            raise RecordError("StepWriter", "block_size", f"is {_show(block_size)}; expected a whole number of steps ≥ 1")
        for name, flag in (("compress", compress), ("overwrite", overwrite), ("durable", durable)):
            if not _is_bool(flag):
                raise RecordError("StepWriter", name, f"is {_show(flag)}; expected True or False")
        try:
            header_payload = packb(header)
        except (TypeError, ValueError) as e:
            raise RecordError("StepWriter", "header", f"cannot be stored: {e}") from None

        self.header: Dict[str, Any] = header
        self._d = len(header["stateDims"])
        self._a = len(header["actions"])
        self._extra_names: List[str] = list(header["extras"])
        self._block_size = int(block_size)
        self._compress = bool(compress)
        self._durable = bool(durable)
        # SPEC §5: the smallest unsigned dtype that holds every action index.
        self._action_dtype, self._action_code = (
            ("u8", "B") if self._a <= 256 else ("u16", "H") if self._a <= 65536 else ("u32", _U32)
        )

        self._episode = 0
        self._episode_steps_written = 0  # steps of the current episode in blocks already written
        self._episode_return = 0.0  # float64 sum of the rewards as given, as the TypeScript recorder keeps it
        self._ended_by: Optional[str] = None  # a terminal or truncated step: end_episode() must come next
        self._online_id = ""
        self._target_id = ""
        self._stored_ids: set = set()  # ids of snapshot records that carry their layers
        self._closed = False
        self._broken: Optional[BaseException] = None
        self._new_block()

        # Where every record went, for the index (SPEC §9).
        self._header_ref = (0, 0)
        self._blocks: List[Tuple[int, int, int, int, int]] = []  # offset, length, episode, firstStep, n
        self._ends: List[Tuple[int, int, int]] = []  # offset, length, episode
        self._snapshots: List[Tuple[int, int, Dict[str, Any]]] = []  # offset, length, meta
        self._notes: List[Tuple[int, int]] = []

        self.stats: Dict[str, int] = {
            "steps": 0, "episodes": 0, "blocks": 0, "snapshots": 0,
            "non_finite_q": 0, "non_finite_reward": 0, "bytes_written": 0,
        }

        flags = os.O_WRONLY | os.O_CREAT | getattr(os, "O_BINARY", 0) | (os.O_TRUNC if overwrite else os.O_EXCL)
        try:
            self._fd = os.open(self.path, flags, 0o666)
        except FileExistsError:
            raise FileExistsError(
                f"{self.path}: already exists; refusing to overwrite a recording (pass overwrite=True to replace it)"
            ) from None
        except OSError as e:
            raise OSError(e.errno, f"{self.path}: cannot create the step file ({e.strerror})") from None
        self._offset = 0
        # The signature and the header in one write: a file that holds anything holds both or a prefix.
        header_frame = _frame(KIND_HEADER, header_payload)
        self._write(MAGIC + header_frame)
        self._offset = len(MAGIC) + len(header_frame)
        self._header_ref = (len(MAGIC), len(header_payload))
        self.stats["bytes_written"] = self._offset

    # -------------------------------------------------------------------------- public calls

    @property
    def current_episode(self) -> int:
        """Index of the episode that the next step belongs to."""
        return self._episode

    @property
    def bytes_written(self) -> int:
        return self._offset

    def step(
        self,
        state: Any,
        action: Any,
        reward: Any,
        q: Any,
        terminal: bool = False,
        truncated: bool = False,
        explored: bool = False,
        epsilon: Optional[float] = None,
        extras: Optional[Mapping[str, float]] = None,
    ) -> None:
        """Append one transition: in `state` the agent took `action`, got `reward`; `q` is Q(state, ·)."""
        self._usable("step")
        if self._ended_by is not None:
            last = self._episode_steps_written + self._n - 1
            raise RecordError(
                "step", "episode",
                f"{self._episode} ended at step {last} ({self._ended_by}); call end_episode() before the next step",
            )
        state_f32 = _f32_vector(state, "step", "state", self._d, "(the header's state dimensions)")
        q_f32 = _f32_vector(q, "step", "q", self._a, "(one per action)")
        if not self._is_action(action):
            raise RecordError("step", "action", f"is {_show(action)}; expected a whole number in 0..{self._a - 1}")
        reward_f64 = _number(reward, "step", "reward")
        epsilon_f64 = None if epsilon is None else _number(epsilon, "step", "epsilon")
        extra_values: Dict[str, float] = {}
        if extras is not None:
            if not isinstance(extras, Mapping):
                raise RecordError("step", "extras", f"is {_show(extras)}; expected a map from column name to number")
            for name, value in extras.items():
                if name not in self._extra_names:
                    declared = ", ".join(self._extra_names) if self._extra_names else "none"
                    raise RecordError("step", f"extras.{name}", f"is not a column of this file; the header declares {declared}")
                extra_values[name] = _number(value, "step", f"extras.{name}")

        # Checked: from here on nothing can fail before the block is complete.
        if self._n == 0:
            self._block_episode = self._episode
            self._block_first_step = self._episode_steps_written
            self._weights = [[0, self._online_id, self._target_id]]
        row = self._n
        self._state.extend(state_f32)
        self._q.extend(q_f32)
        self._action.append(int(action))
        reward_f32 = array("f", [reward_f64])
        self._reward.extend(reward_f32)
        self._flags.append(
            (FLAG_TERMINAL if terminal else 0) | (FLAG_TRUNCATED if truncated else 0) | (FLAG_EXPLORED if explored else 0)
        )
        if epsilon_f64 is not None:
            if self._epsilon is None:
                self._epsilon = array("f", [math.nan] * row)  # NaN where earlier steps had no ε
            self._epsilon.append(epsilon_f64)
        elif self._epsilon is not None:
            self._epsilon.append(math.nan)
        for name in self._extra_names:
            self._extras[name].append(extra_values.get(name, math.nan))
        self._n = row + 1
        self._episode_return += reward_f64
        self.stats["steps"] += 1
        self.stats["non_finite_q"] += sum(1 for v in q_f32 if not math.isfinite(v))
        self.stats["non_finite_reward"] += 0 if math.isfinite(reward_f32[0]) else 1
        if terminal:
            self._ended_by = "terminal"
        elif truncated:
            self._ended_by = "truncated"
        if self._n == self._block_size:
            self._flush()

    def end_episode(
        self,
        outcome: Optional[str] = None,
        failed: bool = False,
        reason: str = "",
        mode: str = "train",
        final_state: Any = None,
        final_q: Any = None,
    ) -> int:
        """
        Close the current episode: writes its open block and its end record; returns its index.
        `outcome` defaults to how the last step ended it ("terminal", "truncated"), else "ended".
        `final_state` is the observation after the last action (a truncated step bootstraps from it).
        """
        self._usable("end_episode")
        fs = None if final_state is None else _f32_vector(final_state, "end_episode", "final_state", self._d, "(the header's state dimensions)")
        fq = None if final_q is None else _f32_vector(final_q, "end_episode", "final_q", self._a, "(one per action)")
        chosen = outcome if outcome is not None else (self._ended_by or "ended")
        if chosen not in ("terminal", "truncated", "ended"):
            raise RecordError("end_episode", "outcome", f"is {_show(chosen)}; expected terminal, truncated or ended")
        if not _is_bool(failed):
            raise RecordError("end_episode", "failed", f"is {_show(failed)}; expected True or False")
        if not isinstance(reason, str):
            raise RecordError("end_episode", "reason", f"is {_show(reason)}; expected a string")
        if not isinstance(mode, str):
            raise RecordError("end_episode", "mode", f"is {_show(mode)}; expected a string such as 'train' or 'eval'")
        length = self._episode_steps_written + self._n
        self._flush()
        episode = self._episode
        payload = packb({
            "episode": episode,
            "length": length,
            "return": self._episode_return,
            "outcome": chosen,
            "failed": bool(failed),
            "reason": reason,
            "mode": mode,
            "finalState": None if fs is None else _array_map("f32", [self._d], _le_bytes(fs)),
            "finalQ": None if fq is None else _array_map("f32", [self._a], _le_bytes(fq)),
        })
        offset = self._append(KIND_EPISODE_END, payload)
        self._ends.append((offset, len(payload), episode))
        self._sync()
        self._episode += 1
        self._episode_steps_written = 0
        self._episode_return = 0.0
        self._ended_by = None
        self.stats["episodes"] += 1
        return episode

    def snapshot(
        self,
        role: str,
        training_step: int,
        layers: Sequence[Layer],
        in_force: bool = True,
        store: bool = True,
    ) -> str:
        """
        Record a Q-network's weights; returns their id (SPEC §7). Dense layers y = act(x · W + b),
        W as [inputs][outputs]: a PyTorch nn.Linear weight is [outputs][inputs], pass its transpose.
        `in_force`: these are now the `role` network's weights, from the next step on.
        `store=False`: only put the id in force without writing the weights (a frequent target sync).
        Weights already stored under the same id are written as a record with layers nil.
        """
        self._usable("snapshot")
        if role not in ("online", "target"):
            raise RecordError("snapshot", "role", f"is {_show(role)}; expected 'online' or 'target'")
        if not _is_count(training_step) or training_step < 0:
            raise RecordError("snapshot", "training_step", f"is {_show(training_step)}; expected a whole number ≥ 0")
        if not _is_bool(in_force):
            raise RecordError("snapshot", "in_force", f"is {_show(in_force)}; expected True or False")
        if not _is_bool(store):
            raise RecordError("snapshot", "store", f"is {_show(store)}; expected True or False")
        checked = self._checked_layers(layers)
        layer_id = snapshot_id(checked)
        if store:
            has_layers = layer_id not in self._stored_ids
            payload = packb({
                "role": role,
                "trainingStep": int(training_step),
                "id": layer_id,
                "layers": None if not has_layers else [
                    {
                        "inputs": inputs,
                        "outputs": outputs,
                        "activation": activation,
                        "weights": _array_map("f32", [inputs, outputs], weights),
                        "bias": _array_map("f32", [outputs], bias),
                    }
                    for inputs, outputs, activation, weights, bias in checked
                ],
            })
            offset = self._append(KIND_SNAPSHOT, payload)
            meta = {"role": role, "id": layer_id, "trainingStep": int(training_step), "hasLayers": has_layers}
            self._snapshots.append((offset, len(payload), meta))
            if has_layers:
                self._stored_ids.add(layer_id)
            self.stats["snapshots"] += 1
        if in_force:
            if role == "online":
                self._online_id = layer_id
            else:
                self._target_id = layer_id
            self._mark_weights()
        return layer_id

    def note(self, episode: int, from_step: int, to_step: int, text: str) -> None:
        """Attach text to steps from_step..to_step (inclusive) of an episode; viewers show it as text."""
        self._usable("note")
        if not _is_count(episode) or episode < 0:
            raise RecordError("note", "episode", f"is {_show(episode)}; expected an episode index ≥ 0")
        if not _is_count(from_step) or from_step < 0:
            raise RecordError("note", "from_step", f"is {_show(from_step)}; expected a step index ≥ 0")
        if not _is_count(to_step) or to_step < from_step:
            raise RecordError("note", "to_step", f"is {_show(to_step)}; expected a step index ≥ from_step ({from_step})")
        if not isinstance(text, str):
            raise RecordError("note", "text", f"is {_show(text)}; expected a string")
        payload = packb({"episode": int(episode), "from": int(from_step), "to": int(to_step), "text": text})
        offset = self._append(KIND_NOTE, payload)
        self._notes.append((offset, len(payload)))

    def close(self) -> None:
        """Write the open block, the index and the trailer, and close the file. Later calls raise."""
        self._usable("close")
        # Steps of an episode that was never ended are kept; the file simply has no end record for it.
        self._flush()
        index_payload = packb(self._index())
        index_offset = self._append(KIND_INDEX, index_payload)
        self._append(KIND_TRAILER, struct.pack("<Q", index_offset))
        self._closed = True
        try:
            self._sync()
        finally:
            os.close(self._fd)

    def __enter__(self) -> "StepWriter":
        return self

    def __exit__(self, exc_type: Any, exc: Any, tb: Any) -> None:
        # The steps recorded before an exception are whole and worth keeping: close them properly.
        # After a failed write (disk full) there is nothing more to write; just let the fd go.
        if self._closed:
            return
        if self._broken is not None:
            self._closed = True
            os.close(self._fd)
            return
        self.close()

    # -------------------------------------------------------------------------- checks

    @staticmethod
    def _checked_header(
        state_dims: Any, actions: Any, gamma: Any, system: Any, extras: Any, run: Any, created_at: Optional[str]
    ) -> Dict[str, Any]:
        def fail(field: str, detail: str) -> NoReturn:
            raise RecordError("StepWriter", field, detail)

        dims: List[Dict[str, str]] = []
        if isinstance(state_dims, (str, bytes)) or not isinstance(state_dims, Iterable):
            fail("state_dims", f"is {_show(state_dims)}; expected a list of (name, unit)")
        for i, d in enumerate(state_dims):
            pair = (d.get("name"), d.get("unit")) if isinstance(d, Mapping) else tuple(d) if isinstance(d, (tuple, list)) else ()
            if len(pair) != 2 or not all(isinstance(x, str) for x in pair):
                fail(f"state_dims[{i}]", f"is {_show(d)}; expected (name, unit) strings")
            dims.append({"name": pair[0], "unit": pair[1]})
        if not dims:
            fail("state_dims", "is empty; expected at least one (name, unit)")
        if isinstance(actions, (str, bytes)) or not isinstance(actions, Iterable):
            fail("actions", f"is {_show(actions)}; expected a list of action names")
        action_names = list(actions)
        if not action_names:
            fail("actions", "is empty; expected at least one action name")
        for i, a in enumerate(action_names):
            if not isinstance(a, str):
                fail(f"actions[{i}]", f"is {_show(a)}; expected an action name")
        if not _is_number(gamma) or not (0 <= float(gamma) <= 1):
            fail("gamma", f"is {_show(gamma)}; expected a discount in [0, 1]")
        if not isinstance(system, Mapping) or not isinstance(system.get("kind"), str):
            fail("system.kind", "is missing; expected the control-system kind, e.g. 'cart-pole'")
        title = system.get("title", system["kind"])
        if not isinstance(title, str):
            fail("system.title", f"is {_show(title)}; expected a string")
        role_map = system.get("map", {})
        if not isinstance(role_map, Mapping):
            fail("system.map", f"is {_show(role_map)}; expected a map from role to state index")
        for role, index in role_map.items():
            if not _is_count(index) or not (0 <= index < len(dims)):
                fail(f"system.map.{role}", f"is {_show(index)}; expected a state index in 0..{len(dims) - 1}")
        params = system.get("params", {})
        if not isinstance(params, Mapping):
            fail("system.params", f"is {_show(params)}; expected a map from name to number")
        for name, value in params.items():
            if not _is_number(value):
                fail(f"system.params.{name}", f"is {_show(value)}; expected a number")
        if isinstance(extras, (str, bytes)) or not isinstance(extras, Iterable):
            fail("extras", f"is {_show(extras)}; expected a list of column names")
        extra_names = list(extras)
        for i, x in enumerate(extra_names):
            if not isinstance(x, str):
                fail(f"extras[{i}]", f"is {_show(x)}; expected a column name")
        if len(set(extra_names)) != len(extra_names):
            fail("extras", "names a column twice")
        if created_at is not None and not isinstance(created_at, str):
            fail("created_at", f"is {_show(created_at)}; expected an ISO 8601 string")
        if created_at is None:
            now = datetime.now(timezone.utc)
            # The form JavaScript's Date.toISOString() gives, as the TypeScript recorder writes.
            created_at = now.strftime("%Y-%m-%dT%H:%M:%S.") + f"{now.microsecond // 1000:03d}Z"
        return {
            "format": "episcope step file",
            "version": FORMAT_VERSION,
            "stateDims": dims,
            "actions": action_names,
            "gamma": int(gamma) if isinstance(gamma, numbers.Integral) else float(gamma),
            "system": {
                "kind": system["kind"],
                "title": title,
                "map": {str(k): int(v) for k, v in role_map.items()},
                "params": {str(k): (int(v) if isinstance(v, numbers.Integral) else float(v)) for k, v in params.items()},
            },
            "extras": extra_names,
            "run": _plain_run_info(run),
            "createdAt": created_at,
        }

    def _is_action(self, action: Any) -> bool:
        if _is_bool(action):
            return False
        if isinstance(action, numbers.Integral):
            whole = int(action)
        elif isinstance(action, float) and action.is_integer():  # 2.0 is a whole number, as in the TypeScript recorder
            whole = int(action)
        else:
            return False
        return 0 <= whole < self._a

    def _checked_layers(self, layers: Any) -> List[Tuple[int, int, str, bytes, bytes]]:
        if isinstance(layers, (str, bytes, Mapping)) or not isinstance(layers, Iterable):
            raise RecordError("snapshot", "layers", f"is {_show(layers)}; expected a list of (weights, bias, activation)")
        given = list(layers)
        if not given:
            raise RecordError("snapshot", "layers", "is empty; expected at least one dense layer")
        checked: List[Tuple[int, int, str, bytes, bytes]] = []
        for i, layer in enumerate(given):
            at = f"layers[{i}]"
            if isinstance(layer, Mapping):
                weights, bias, activation, shape = layer.get("weights"), layer.get("bias"), layer.get("activation"), layer.get("shape")
            elif isinstance(layer, (tuple, list)) and len(layer) in (3, 4):
                weights, bias, activation = layer[0], layer[1], layer[2]
                shape = layer[3] if len(layer) == 4 else None
            else:
                raise RecordError("snapshot", at, f"is {_show(layer)}; expected (weights, bias, activation)")
            inputs, outputs, w = _layer_weights(weights, shape, at)
            want = self._d if i == 0 else checked[-1][1]
            why = "the header's state dimensions" if i == 0 else "the previous layer's outputs"
            if inputs != want:
                raise RecordError(
                    "snapshot", f"{at}.inputs",
                    f"is {inputs}; expected {want} ({why}). Weights are [inputs][outputs]: "
                    "a PyTorch nn.Linear weight is [outputs][inputs], pass its transpose",
                )
            if outputs < 1:
                raise RecordError("snapshot", f"{at}.outputs", f"is {outputs}; expected a whole number ≥ 1")
            b = _f32_vector(bias, "snapshot", f"{at}.bias", outputs, "(one per output)")
            if activation not in ACTIVATIONS:
                raise RecordError("snapshot", f"{at}.activation", f"is {_show(activation)}; expected one of {', '.join(ACTIVATIONS)}")
            checked.append((inputs, outputs, activation, _le_bytes(w), _le_bytes(b)))
        last = checked[-1][1]
        if last != self._a:
            raise RecordError("snapshot", f"layers[{len(checked) - 1}].outputs", f"is {last}; expected {self._a} (one Q-value per action)")
        return checked

    def _usable(self, call: str) -> None:
        if self._broken is not None:
            raise RecordError(call, "writer", f"cannot be used after its file failed: {self._broken}")
        if self._closed:
            raise RecordError(call, "writer", "is closed; no call is allowed after close()")

    # -------------------------------------------------------------------------- blocks and records

    def _new_block(self) -> None:
        self._n = 0
        self._block_episode = 0
        self._block_first_step = 0
        self._state = array("f")
        self._action = array(self._action_code)
        self._reward = array("f")
        self._flags = array("B")
        self._q = array("f")
        self._epsilon: Optional[array] = None
        self._extras: Dict[str, array] = {name: array("f") for name in self._extra_names}
        self._weights: List[List[Any]] = []

    def _mark_weights(self) -> None:
        """A snapshot put in force: the open block's next row starts a new weights run."""
        if self._n == 0:
            return  # the next block starts with the ids in force
        last = self._weights[-1]
        if last[0] == self._n:
            self._weights[-1] = [self._n, self._online_id, self._target_id]
        elif last[1] != self._online_id or last[2] != self._target_id:
            self._weights.append([self._n, self._online_id, self._target_id])

    def _flush(self) -> None:
        n = self._n
        if n == 0:
            return
        # Weights that came into force after the block's last step belong to the next block, which starts with them.
        runs = [run for run in self._weights if run[0] < n]
        c = self._compress
        payload: Dict[str, Any] = {
            "episode": self._block_episode,
            "firstStep": self._block_first_step,
            "n": n,
            "state": _array_map("f32", [n, self._d], _le_bytes(self._state), c),
            "action": _array_map(self._action_dtype, [n], _le_bytes(self._action), c),
            "reward": _array_map("f32", [n], _le_bytes(self._reward), c),
            "flags": _array_map("u8", [n], self._flags.tobytes(), c),
            "q": _array_map("f32", [n, self._a], _le_bytes(self._q), c),
            "weights": runs,
        }
        if self._epsilon is not None:
            payload["epsilon"] = _array_map("f32", [n], _le_bytes(self._epsilon), c)
        if self._extra_names:
            payload["extras"] = {name: _array_map("f32", [n], _le_bytes(self._extras[name]), c) for name in self._extra_names}
        encoded = packb(payload)
        offset = self._append(KIND_STEP_BLOCK, encoded)
        self._blocks.append((offset, len(encoded), self._block_episode, self._block_first_step, n))
        self._episode_steps_written += n
        self._new_block()
        self.stats["blocks"] += 1

    def _index(self) -> Dict[str, Any]:
        def column(dtype: str, values: List[int]) -> Dict[str, Any]:
            typed = array("d" if dtype == "f64" else _U32, values)
            return _array_map(dtype, [len(values)], _le_bytes(typed))

        def refs(table: Sequence[Tuple[Any, ...]]) -> Dict[str, Any]:
            # offset as f64: SPEC §9, so that offsets past 4 GiB fit and JavaScript reads them as numbers.
            return {"offset": column("f64", [r[0] for r in table]), "length": column("u32", [r[1] for r in table])}

        return {
            "header": {"offset": self._header_ref[0], "length": self._header_ref[1]},
            "blocks": {
                **refs(self._blocks),
                "episode": column("u32", [b[2] for b in self._blocks]),
                "firstStep": column("u32", [b[3] for b in self._blocks]),
                "n": column("u32", [b[4] for b in self._blocks]),
            },
            "ends": {**refs(self._ends), "episode": column("u32", [e[2] for e in self._ends])},
            "snapshots": {**refs(self._snapshots), "meta": [s[2] for s in self._snapshots]},
            "notes": refs(self._notes),
        }

    def _append(self, kind: int, payload: bytes) -> int:
        """Frame and write one record; returns the offset of its frame."""
        data = _frame(kind, payload)
        offset = self._offset
        self._write(data)
        self._offset += len(data)
        self.stats["bytes_written"] = self._offset
        return offset

    def _write(self, data: bytes) -> None:
        """
        One os.write per record, straight to the file descriptor (no Python buffer to lose when
        the process is killed). os.write may take fewer bytes only when the disk is full or a signal
        interrupts it; the loop finishes the record then, or the error stops the writer.
        """
        view = memoryview(data)
        try:
            while view:
                done = os.write(self._fd, view)
                view = view[done:]
        except OSError as e:
            # Whole records are on disk, perhaps one partial one after them: take no more.
            self._broken = e
            raise

    def _sync(self) -> None:
        if self._durable:
            os.fsync(self._fd)
