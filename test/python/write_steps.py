"""
Run by python-writer.test.ts: records a step file with episcope_steps.py and writes, beside it, a
JSON file of what the file must hold, kept from the values this script passes in (not from the
writer's state), so that the TypeScript reader can check every value bit for bit.

    python3 write_steps.py MODE STEPS_PATH EXPECTED_JSON_PATH

MODE is one of:
  plain       the whole scenario, columns stored raw, closed properly
  compressed  the same scenario with compress=True
  killed      a few episodes, then SIGKILL mid-episode with steps in the open block
  mid-write   as killed, but the process dies halfway through writing a step block
  errors      bad calls between good ones; the JSON also lists the refusals' messages

In the JSON, float32 values are the hex of their little-endian bytes (struct.pack('<f', x).hex()),
float64 values (γ, returns) are numbers, or "NaN" / "Infinity" / "-Infinity" (JSON has none).
"""
from __future__ import annotations

import json
import math
import os
import signal
import struct
import sys
from array import array
from typing import Any, Dict, List, Optional, Sequence, Tuple

sys.dont_write_bytecode = True  # leave no __pycache__ beside the writer
sys.path.insert(0, os.path.join(os.path.dirname(__file__), "..", "..", "formats", "python"))
import episcope_steps as es  # noqa: E402

try:
    import numpy as np
except ImportError:  # the writer works without NumPy; the NumPy inputs are then left out
    np = None

MODE, STEPS_PATH, JSON_PATH = sys.argv[1], sys.argv[2], sys.argv[3]
NAN = float("nan")
INF = float("inf")


def f32hex(x: float) -> str:
    """The float32 a Float32Array would hold for x: nearest, ±Infinity past the largest float32."""
    try:
        return struct.pack("<f", x).hex()
    except OverflowError:
        return struct.pack("<f", math.copysign(INF, x)).hex()


def f64json(x: float) -> Any:
    if math.isnan(x):
        return "NaN"
    if math.isinf(x):
        return "Infinity" if x > 0 else "-Infinity"
    return x


STATE_DIMS = [("position", "m"), ("velocity", "m/s"), ("angle", "rad"), ("angularVelocity", "rad/s")]
ACTIONS = ["push left", "coast", "push right"]
SYSTEM = {
    "kind": "cart-pole",
    "title": "balancing trolley",
    "map": {"position": 0, "velocity": 1, "angle": 2, "angularVelocity": 3},
    "params": {"railHalfLength": 1.75, "angleLimit": 0.26, "poleHalfLength": 0.4, "force": 8},
}
RUN = {
    "seed": 11,
    "lr": 0.0005,
    "hidden": (5,),
    "purpose": "Python writer test — é ✓",
    "nothing": None,
    "ratio": NAN,  # JSON has no NaN: stored as nil, as the TypeScript recorder stores it
    "big": 2**40,
    "negative": -7,
    "nested": {"sync": [4, 2.5, "steps"], "dueling": False},
}
# RUN as the header must hold it: lists for tuples, nil for NaN.
RUN_STORED = {**RUN, "hidden": [5], "ratio": None}
CREATED_AT = "2025-03-04T05:06:07.089Z"


class Expected:
    """What the file must hold, kept from the calls as this script makes them."""

    def __init__(self, block_size: int, compress: bool) -> None:
        self.doc: Dict[str, Any] = {
            "mode": MODE,
            "blockSize": block_size,
            "compress": compress,
            "numpy": np is not None,
            "header": {
                "format": "episcope step file",
                "version": 1,
                "stateDims": [{"name": n, "unit": u} for n, u in STATE_DIMS],
                "actions": ACTIONS,
                "gamma": 0.97,
                "system": SYSTEM,
                "extras": ["tdError"],
                "run": RUN_STORED,
                "createdAt": CREATED_AT,
            },
            "episodes": [],
            "snapshots": [],
            "unstored": [],
            "notes": [],
            "errors": [],
            "closed": False,
        }
        self.online = ""
        self.target = ""
        self.open_episode()

    def open_episode(self) -> None:
        self.steps: Dict[str, Any] = {
            "state": [], "action": [], "reward": [], "flags": [], "q": [], "epsilon": [], "tdError": [], "weights": [],
        }
        self.ret = 0.0
        self.doc["episodes"].append({"episode": len(self.doc["episodes"]), "steps": self.steps, "end": None})

    def step(self, state: Sequence[float], action: int, reward: float, q: Sequence[float], flags: int,
             epsilon: Optional[float], td: Optional[float]) -> None:
        s = self.steps
        s["state"] += [f32hex(x) for x in state]
        s["action"].append(action)
        s["reward"].append(f32hex(reward))
        s["flags"].append(flags)
        s["q"] += [f32hex(x) for x in q]
        s["epsilon"].append(None if epsilon is None else f32hex(epsilon))
        s["tdError"].append(None if td is None else f32hex(td))
        s["weights"].append([self.online, self.target])
        self.ret += reward

    def end(self, length: int, outcome: str, failed: bool, reason: str, mode: str,
            final_state: Optional[Sequence[float]], final_q: Optional[Sequence[float]]) -> None:
        ep = self.doc["episodes"][-1]
        ep["end"] = {
            "episode": ep["episode"],
            "length": length,
            "return": f64json(self.ret),
            "outcome": outcome,
            "failed": failed,
            "reason": reason,
            "mode": mode,
            "finalState": None if final_state is None else [f32hex(x) for x in final_state],
            "finalQ": None if final_q is None else [f32hex(x) for x in final_q],
        }
        self.open_episode()

    def snapshot(self, role: str, step: int, sid: str, layers: List[Tuple[List[List[float]], List[float], str]],
                 stored: bool, has_layers: bool, in_force: bool) -> None:
        entry = {
            "role": role,
            "trainingStep": step,
            "id": sid,
            "hasLayers": has_layers,
            "layers": [
                {
                    "inputs": len(w),
                    "outputs": len(w[0]),
                    "activation": act,
                    "weights": [f32hex(x) for row in w for x in row],
                    "bias": [f32hex(x) for x in b],
                }
                for w, b, act in layers
            ],
        }
        (self.doc["snapshots"] if stored else self.doc["unstored"]).append(entry)
        if in_force:
            if role == "online":
                self.online = sid
            else:
                self.target = sid

    def save(self, cut: bool = False) -> None:
        """Write the JSON; `cut`: keep only the steps of blocks already written (what survives a kill)."""
        doc = json.loads(json.dumps(self.doc))
        episodes = doc["episodes"]
        if cut:
            bs = doc["blockSize"]
            last = episodes[-1]
            written = (len(last["steps"]["action"]) // bs) * bs
            doc["lostSteps"] = len(last["steps"]["action"]) - written
            for key, width in (("state", 4), ("q", 3)):
                last["steps"][key] = last["steps"][key][: written * width]
            for key in ("action", "reward", "flags", "epsilon", "tdError", "weights"):
                last["steps"][key] = last["steps"][key][:written]
        # The last entry is the episode the next step would open; drop it when it holds nothing.
        if not episodes[-1]["steps"]["action"] and episodes[-1]["end"] is None:
            episodes.pop()
        with open(JSON_PATH, "w", encoding="utf-8") as f:
            json.dump(doc, f, indent=1, allow_nan=False)
            f.flush()
            os.fsync(f.fileno())


def as_input(values: List[float], t: int) -> Any:
    """The same values in each of the forms a training loop may hand over."""
    kind = t % 6
    if kind == 0:
        return list(values)
    if kind == 1:
        return tuple(values)
    if kind == 2:
        return array("d", values)
    if kind == 3:
        return array("f", values)
    if np is not None and kind == 4:
        return np.array(values, dtype=np.float64)
    if np is not None and kind == 5:
        return np.array(values, dtype=np.float32)
    return list(values)


def trolley_state(episode: int, t: int) -> List[float]:
    return [0.1 * episode + 0.01 * t, 0.3 - 0.002 * t, 0.05 * math.sin(t / 7), -0.1 * math.cos(t / 5)]


def trolley_q(episode: int, t: int) -> List[float]:
    q = [10.0 - 0.05 * t, 9.5 + 0.01 * t + episode, 10.25 - 0.03 * t]
    # Non-finite Q-values are evidence a recording must keep, not refuse.
    if (episode, t) == (0, 3):
        q[1] = NAN
    if (episode, t) == (0, 7):
        q[0] = INF
    if (episode, t) == (0, 11):
        q[2] = -INF
    if (episode, t) == (0, 13):
        q[0] = 1e39  # finite as a double, +Infinity as a float32
    if (episode, t) == (0, 15):
        q[1] = -NAN  # a NaN with its sign bit set
    return q


def layers_a() -> List[Tuple[List[List[float]], List[float], str]]:
    hidden = [[0.1 * (i + 1) - 0.05 * j for j in range(5)] for i in range(4)]
    out = [[0.2 * i - 0.1 * j for j in range(3)] for i in range(5)]
    return [(hidden, [0.01, -0.02, 0.03, 0.0, 0.5], "relu"), (out, [1.0, 0.0, -1.0], "linear")]


def layers_b(scale: float) -> List[Tuple[List[List[float]], List[float], str]]:
    return [(w if i else [[x * scale for x in row] for row in w], b, act) for i, (w, b, act) in enumerate(layers_a())]


def snapshot(rec: es.StepWriter, exp: Expected, role: str, step: int, layers: List[Tuple[List[List[float]], List[float], str]],
             form: str, stored_ids: set, store: bool = True, in_force: bool = True) -> str:
    """Hand the layers over as nested rows, flat lists with a shape, or NumPy arrays."""
    if form == "flat":
        given: List[Any] = [([x for row in w for x in row], b, act, (len(w), len(w[0]))) for w, b, act in layers]
    elif form == "numpy" and np is not None:
        # As from a PyTorch nn.Linear: weight is [outputs][inputs], transposed to [inputs][outputs].
        given = [(np.array(w, dtype=np.float32).T.copy().T, np.array(b), act) for w, b, act in layers]
    else:
        given = [(w, b, act) for w, b, act in layers]
    sid = rec.snapshot(role, step, given, in_force=in_force, store=store)
    exp.snapshot(role, step, sid, layers, store, store and sid not in stored_ids, in_force)
    if store:
        stored_ids.add(sid)
    return sid


def run_steps(rec: es.StepWriter, exp: Expected, episode: int, ts: range, last_flags: int = 0,
              before_step: Any = None) -> None:
    for t in ts:
        if before_step is not None:
            before_step(t)
        state = trolley_state(episode, t)
        q = trolley_q(episode, t)
        action = (t + episode) % 3
        reward = 1.0 if t % 4 else 0.1
        if (episode, t) == (0, 5):
            reward = NAN
        if (episode, t) == (2, 0):
            reward = INF
        if (episode, t) == (3, 2):
            reward = -2.5e-3
        epsilon = None if t % 3 == 0 or episode == 3 else max(0.05, 1.0 - 0.01 * t)
        td = None if t % 4 == 2 else 0.125 * t - 1
        explored = t % 5 == 1
        final = t == ts[-1]
        terminal = final and bool(last_flags & es.FLAG_TERMINAL)
        truncated = final and bool(last_flags & es.FLAG_TRUNCATED)
        rec.step(as_input(state, t), action, reward, as_input(q, t + 1), terminal=terminal, truncated=truncated,
                 explored=explored, epsilon=epsilon, extras=None if td is None else {"tdError": td})
        flags = (1 if terminal else 0) | (2 if truncated else 0) | (4 if explored else 0)
        exp.step(state, action, reward, q, flags, epsilon, td)


def open_writer(block_size: int, compress: bool) -> Tuple[es.StepWriter, Expected]:
    rec = es.StepWriter(STEPS_PATH, state_dims=STATE_DIMS, actions=ACTIONS, gamma=0.97, system=SYSTEM,
                        extras=["tdError"], run=RUN, block_size=block_size, compress=compress, created_at=CREATED_AT)
    return rec, Expected(block_size, compress)


def scenario(compress: bool) -> None:
    rec, exp = open_writer(16, compress)
    ids: set = set()
    online = snapshot(rec, exp, "online", 0, layers_a(), "nested", ids)
    # The target starts as a copy of the online net: same weights, same id, so layers nil.
    same = snapshot(rec, exp, "target", 0, layers_a(), "nested", ids)
    assert same == online

    def episode0_events(t: int) -> None:
        if t == 20:  # mid-block (row 4 of the second block): a target sync recorded by id only
            snapshot(rec, exp, "target", 20, layers_b(0.5), "flat", ids, store=False)
        if t == 32:  # at a block boundary: the next block starts with the new ids
            snapshot(rec, exp, "online", 32, layers_b(2.0), "numpy", ids)
        if t == 35:  # stored for later, but not the weights acting now
            snapshot(rec, exp, "online", 35, layers_b(3.0), "nested", ids, in_force=False)

    # Episode 0: 40 steps (blocks of 16, 16, 8), ends terminal; NaN reward, non-finite Q.
    run_steps(rec, exp, 0, range(40), es.FLAG_TERMINAL, episode0_events)
    rec.note(0, 2, 6, 'mast wobbles — <b>not markup</b> & "quoted"')
    exp.doc["notes"].append({"episode": 0, "from": 2, "to": 6, "text": 'mast wobbles — <b>not markup</b> & "quoted"'})
    same_ep = rec.end_episode(failed=True, reason="mast fell")
    assert same_ep == 0
    exp.end(40, "terminal", True, "mast fell", "train", None, None)

    # Episode 1: no steps at all.
    rec.end_episode(reason="operator stop", mode="eval")
    exp.end(0, "ended", False, "operator stop", "eval", None, None)

    # Episode 2: one step, truncated, +Infinity reward; the final state and Q for the bootstrap.
    run_steps(rec, exp, 2, range(1), es.FLAG_TRUNCATED)
    final_state = [0.5, -0.25, 0.125, 0.1]
    final_q = [NAN, 3.0, -INF]
    rec.end_episode(reason="time limit", final_state=tuple(final_state), final_q=final_q)
    exp.end(1, "truncated", False, "time limit", "train", final_state, final_q)

    # Episode 3: exactly one block; the last step both terminal and truncated (terminal decides); no ε.
    run_steps(rec, exp, 3, range(16), es.FLAG_TERMINAL | es.FLAG_TRUNCATED)
    rec.end_episode(failed=False, reason="rim reached")
    exp.end(16, "terminal", False, "rim reached", "train", None, None)

    # Episode 4: still running at close: its steps are kept, it has no end record.
    run_steps(rec, exp, 4, range(7))
    rec.note(4, 0, 6, "left running")
    exp.doc["notes"].append({"episode": 4, "from": 0, "to": 6, "text": "left running"})
    rec.close()
    exp.doc["closed"] = True
    exp.doc["stats"] = rec.stats
    exp.save()


def killed(mid_write: bool) -> None:
    rec, exp = open_writer(4, False)
    ids: set = set()
    snapshot(rec, exp, "online", 0, layers_a(), "nested", ids)
    run_steps(rec, exp, 0, range(6), es.FLAG_TERMINAL)
    rec.end_episode(failed=True, reason="mast fell")
    exp.end(6, "terminal", True, "mast fell", "train", None, None)
    rec.note(0, 1, 3, "before the crash")
    exp.doc["notes"].append({"episode": 0, "from": 1, "to": 3, "text": "before the crash"})
    # Episode 1: two blocks of 4 reach the file; then the process dies.
    run_steps(rec, exp, 1, range(10))
    if not mid_write:
        exp.save(cut=True)
        os.kill(os.getpid(), signal.SIGKILL)  # two steps are still in the open block

    # Die halfway through the next block's single write, as a killed process may.
    real_write = os.write

    def half_then_die(fd: int, data: Any) -> int:
        data = bytes(data)
        real_write(fd, data[: len(data) // 2])
        os.kill(os.getpid(), signal.SIGKILL)
        return 0

    exp.save(cut=True)
    es.os.write = half_then_die  # type: ignore[attr-defined]  # es.os is this process's os module
    run_steps(rec, exp, 1, range(10, 12))
    raise SystemExit("unreachable: the process should have been killed")


def errors() -> None:
    """Every refusal leaves the file as it was: the file then holds exactly the accepted calls."""
    refused: List[str] = []

    def refuse(call: Any) -> None:
        try:
            call()
        except ValueError as e:
            refused.append(str(e))
            return
        raise AssertionError("expected a ValueError")

    # Refused before any file is created.
    for bad in (
        lambda: es.StepWriter(STEPS_PATH, [], ACTIONS, 0.97, SYSTEM),
        lambda: es.StepWriter(STEPS_PATH, STATE_DIMS, ACTIONS, 1.5, SYSTEM),
        lambda: es.StepWriter(STEPS_PATH, STATE_DIMS, ACTIONS, 0.97, {**SYSTEM, "map": {"angle": 4}}),
        lambda: es.StepWriter(STEPS_PATH, STATE_DIMS, ACTIONS, 0.97, SYSTEM, extras=["a", "a"]),
        lambda: es.StepWriter(STEPS_PATH, STATE_DIMS, ACTIONS, 0.97, SYSTEM, block_size=0),
        lambda: es.StepWriter(STEPS_PATH, STATE_DIMS, ACTIONS, 0.97, SYSTEM, run={"when": object()}),
    ):
        refuse(bad)
    assert not os.path.exists(STEPS_PATH), "a refused StepWriter must not create the file"

    rec, exp = open_writer(3, False)
    try:
        es.StepWriter(STEPS_PATH, STATE_DIMS, ACTIONS, 0.97, SYSTEM)
        raise AssertionError("expected FileExistsError")
    except FileExistsError as e:
        refused.append(str(e))

    good = lambda t: dict(state=[t, 0, 0, 0], action=t % 3, reward=1.0, q=[t, t + 1, t + 2])  # noqa: E731

    def ok(t: int, **kw: Any) -> None:
        args = {**good(t), **kw}
        rec.step(**args)
        flags = (1 if kw.get("terminal") else 0) | (2 if kw.get("truncated") else 0)
        exp.step(args["state"], args["action"], args["reward"], args["q"], flags, None, None)

    ok(0)
    refuse(lambda: rec.step(**{**good(9), "state": [1, 2, 3]}))
    refuse(lambda: rec.step(**{**good(9), "state": None}))
    refuse(lambda: rec.step(**{**good(9), "state": [1, 2, "x", 4]}))
    refuse(lambda: rec.step(**{**good(9), "q": [1]}))
    refuse(lambda: rec.step(**{**good(9), "action": 1.5}))
    refuse(lambda: rec.step(**{**good(9), "action": 3}))
    refuse(lambda: rec.step(**{**good(9), "action": -1}))
    refuse(lambda: rec.step(**{**good(9), "action": True}))
    refuse(lambda: rec.step(**{**good(9), "reward": "1"}))
    refuse(lambda: rec.step(**{**good(9), "epsilon": "high"}))
    refuse(lambda: rec.step(**{**good(9), "extras": {"loss": 1}}))
    ok(1)
    ok(2)
    ok(3, terminal=True)
    refuse(lambda: rec.step(**good(9)))
    refuse(lambda: rec.end_episode(final_state=[1, 2, 3]))
    refuse(lambda: rec.end_episode(final_q=[1, 2]))
    refuse(lambda: rec.end_episode(outcome="crashed"))
    refuse(lambda: rec.snapshot("critic", 0, layers_a()))
    refuse(lambda: rec.snapshot("online", -1, layers_a()))
    refuse(lambda: rec.note(0, 5, 2, "backwards"))
    rec.end_episode()
    exp.end(4, "terminal", False, "", "train", None, None)
    ok(0)
    rec.close()
    exp.doc["closed"] = True
    refuse(lambda: rec.step(**good(1)))
    refuse(lambda: rec.close())
    exp.doc["errors"] = refused
    exp.save()


if MODE in ("plain", "compressed"):
    scenario(MODE == "compressed")
elif MODE == "killed":
    killed(False)
elif MODE == "mid-write":
    killed(True)
elif MODE == "errors":
    errors()
else:
    raise SystemExit(f"unknown mode {MODE!r}; expected plain, compressed, killed, mid-write or errors")
