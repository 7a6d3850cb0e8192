"""gapwatch bridge: get data out of a Python training setup into files gapwatch reads.

Standard library only. Two tools:

1. ``EpisodeLog``: wrap any environment with the usual ``reset()`` / ``step(action)`` methods (``step``
   returning ``(obs, reward, terminated, truncated, info)``, or the older ``(obs, reward, done, info)``).
   It adds up the designer reward (the env's reward) and the intent increment of every step, and when an
   episode ends writes one JSON line, flushed at once so a follower sees it:

       {"step": <environment steps so far, all episodes>, "designer": <episode return>, "intent": <episode intent>}

   The intent increment of a step is ``info[intent_key]`` or ``intent_fn(obs, reward, terminated,
   truncated, info)``. Read the file with ``gapwatch ingest <file> --designer designer --intent intent``.

2. ``export_tabular_model``: write a tabular environment's transition table
   ``P[s][a] = [(prob, next_state, reward, terminated), ...]`` as a ``gapwatch-mdp/1`` model file for the
   exact solvers, audits and learners (``gapwatch solve --env model.json``). The intent of each outcome
   comes from a function you supply, ``intent(s, a, next_state, terminated)``.
"""

from __future__ import annotations

import json
import math
from typing import Any, Callable, Dict, List, Mapping, Optional, Sequence, Tuple, Union

MODEL_FORMAT = "gapwatch-mdp/1"
PROB_TOLERANCE = 1e-9

__all__ = ["EpisodeLog", "export_tabular_model", "build_model_document", "MODEL_FORMAT"]


# ----------------------------------------------------------------------------------------------------
# 1. Per-episode JSON lines from any reset()/step() environment


class EpisodeLog:
    """Wrap ``env``; every finished episode appends one JSON line to ``path``.

    intent_key: the ``info`` key holding this step's intent increment (default "intent").
    intent_fn:  instead of a key, a function ``(obs, reward, terminated, truncated, info) -> float``.
    missing:    the increment to use when ``info`` lacks ``intent_key``; None (default) raises KeyError,
                so a misspelt key is not silently read as zero intent.
    append:     add to an existing file instead of starting a new one.

    ``reset`` and ``step`` return exactly what the wrapped environment returns; other attributes are
    the wrapped environment's.
    """

    def __init__(
        self,
        env: Any,
        path: str,
        intent_key: str = "intent",
        intent_fn: Optional[Callable[..., float]] = None,
        missing: Optional[float] = None,
        append: bool = False,
    ) -> None:
        self.env = env
        self.path = path
        self.intent_key = intent_key
        self.intent_fn = intent_fn
        self.missing = missing
        self.total_steps = 0
        self.episodes = 0
        self._return = 0.0
        self._intent = 0.0
        self._file = open(path, "a" if append else "w", encoding="utf-8")

    def __getattr__(self, name: str) -> Any:
        return getattr(self.env, name)

    def reset(self, *args: Any, **kwargs: Any) -> Any:
        self._return = 0.0
        self._intent = 0.0
        return self.env.reset(*args, **kwargs)

    def step(self, action: Any) -> Any:
        result = self.env.step(action)
        if len(result) == 5:
            obs, reward, terminated, truncated, info = result
        elif len(result) == 4:
            obs, reward, done, info = result
            truncated = bool(isinstance(info, Mapping) and info.get("TimeLimit.truncated", False))
            terminated = bool(done) and not truncated
        else:
            raise ValueError(f"step() returned {len(result)} values; expected 5 (obs, reward, terminated, truncated, info) or 4 (obs, reward, done, info)")
        self.total_steps += 1
        self._return += float(reward)
        self._intent += self._increment(obs, reward, terminated, truncated, info)
        if terminated or truncated:
            self._write()
        return result

    def _increment(self, obs: Any, reward: Any, terminated: Any, truncated: Any, info: Any) -> float:
        if self.intent_fn is not None:
            return float(self.intent_fn(obs, reward, terminated, truncated, info))
        if isinstance(info, Mapping) and self.intent_key in info:
            return float(info[self.intent_key])
        if self.missing is not None:
            return float(self.missing)
        keys = sorted(str(k) for k in info) if isinstance(info, Mapping) else []
        raise KeyError(f"info has no {self.intent_key!r} (keys: {', '.join(keys) or 'none'}); pass intent_key=, intent_fn= or missing=")

    def _write(self) -> None:
        line = json.dumps({"step": self.total_steps, "designer": self._return, "intent": self._intent})
        self._file.write(line + "\n")
        self._file.flush()
        self.episodes += 1
        self._return = 0.0
        self._intent = 0.0

    def close(self) -> None:
        """Close the log (an unfinished episode is not written) and the wrapped environment."""
        if not self._file.closed:
            self._file.close()
        inner = getattr(self.env, "close", None)
        if callable(inner):
            inner()

    def __enter__(self) -> "EpisodeLog":
        return self

    def __exit__(self, *exc: Any) -> None:
        self.close()


# ----------------------------------------------------------------------------------------------------
# 2. Transition tables to gapwatch-mdp/1 model files

Outcome = Tuple[float, int, float, bool]
FeatureFn = Callable[[int, int, int, float, bool], float]


def _indexed(x: Any, what: str) -> List[Any]:
    """A list from a list, or from a dict keyed 0..n-1 (tabular envs use either)."""
    if isinstance(x, Mapping):
        keys = sorted(x.keys())
        if keys != list(range(len(keys))):
            raise ValueError(f"{what} must be indexed 0..n-1, got keys {keys[:10]}")
        return [x[k] for k in keys]
    return list(x)


def _clean(x: float) -> float:
    x = float(x)
    if not math.isfinite(x):
        raise ValueError(f"non-finite value {x}")
    return 0.0 if x == 0 else x


def build_model_document(
    P: Any,
    *,
    intent: Callable[[int, int, int, bool], float],
    gamma: float,
    start: Union[int, Mapping[Any, float], Sequence[float]],
    name: str = "exported-env",
    actions: Optional[Sequence[str]] = None,
    states: Optional[Sequence[str]] = None,
    features: Optional[Mapping[str, FeatureFn]] = None,
    rewards: Optional[Mapping[str, Mapping[str, float]]] = None,
    horizon: Optional[int] = None,
) -> Dict[str, Any]:
    """The gapwatch-mdp/1 document of a transition table (see ``export_tabular_model``)."""
    if not (0 < gamma <= 1):
        raise ValueError(f"gamma must be in (0, 1], got {gamma}")
    rows = _indexed(P, "P")
    n_states = len(rows)
    if n_states == 0:
        raise ValueError("P has no states")
    table = [_indexed(r, f"P[{s}]") for s, r in enumerate(rows)]
    n_actions = len(table[0])
    for s, acts in enumerate(table):
        if len(acts) != n_actions:
            raise ValueError(f"state {s} has {len(acts)} actions, state 0 has {n_actions}; every state needs the same actions")
    action_names = [str(a) for a in (actions if actions is not None else range(n_actions))]
    if len(action_names) != n_actions or len(set(action_names)) != n_actions:
        raise ValueError(f"need {n_actions} distinct action names, got {action_names}")
    feats: Dict[str, FeatureFn] = dict(features) if features is not None else {"reward": lambda s, a, nxt, r, term: r}
    feature_names = list(feats.keys())
    labels = list(states) if states is not None else [str(s) for s in range(n_states)]
    if len(labels) != n_states:
        raise ValueError(f"{len(labels)} state labels for {n_states} states")

    # Terminal states: those an outcome enters with terminated=True. If a state is also entered without
    # termination somewhere, the terminating outcomes go to an absorbing copy of it instead.
    ends_in = set()
    continues_in = set()
    for s, acts in enumerate(table):
        for a, outs in enumerate(acts):
            for prob, nxt, _r, term in outs:
                if not (0 <= int(nxt) < n_states):
                    raise ValueError(f"P[{s}][{a}] has next state {nxt}, outside 0..{n_states - 1}")
                (ends_in if term else continues_in).add(int(nxt))
    copy_of: Dict[int, int] = {}
    for t in sorted(ends_in & continues_in):
        copy_of[t] = len(labels)
        labels.append(f"{labels[t]} (end)")
    terminal = sorted((ends_in - continues_in) | set(copy_of.values()))
    terminal_set = set(terminal)

    transitions: List[Dict[str, Any]] = []
    for s, acts in enumerate(table):
        if s in terminal_set:
            continue  # absorbing: the model format implies the self-loop
        for a, outs in enumerate(acts):
            merged: Dict[Tuple[Any, ...], float] = {}
            order: List[Tuple[Any, ...]] = []
            total = 0.0
            for prob, nxt, r, term in outs:
                prob = float(prob)
                if prob < 0 or prob > 1 + PROB_TOLERANCE:
                    raise ValueError(f"P[{s}][{a}] has probability {prob}")
                total += prob
                if prob == 0:
                    continue
                nxt = int(nxt)
                target = copy_of.get(nxt, nxt) if term else nxt
                fvals = tuple(_clean(fn(s, a, nxt, float(r), bool(term))) for fn in feats.values())
                key = (target, fvals, _clean(intent(s, a, nxt, bool(term))))
                if key not in merged:
                    order.append(key)
                    merged[key] = 0.0
                merged[key] += prob
            if abs(total - 1) > PROB_TOLERANCE:
                raise ValueError(f"P[{s}][{a}] probabilities sum to {total}, not 1")
            outcomes = []
            for key in order:
                target, fvals, iv = key
                o: Dict[str, Any] = {"next": target, "p": merged[key]}
                fd = {f: v for f, v in zip(feature_names, fvals) if v != 0}
                if fd:
                    o["features"] = fd
                if iv != 0:
                    o["intent"] = iv
                outcomes.append(o)
            transitions.append({"state": s, "action": a, "outcomes": outcomes})

    if isinstance(start, int):
        start_doc: Union[int, Dict[str, float]] = start
    elif isinstance(start, Mapping):
        start_doc = {str(k): float(v) for k, v in start.items() if float(v) != 0}
    else:
        probs = [float(p) for p in start]
        if len(probs) != n_states:
            raise ValueError(f"start distribution has {len(probs)} entries for {n_states} states")
        start_doc = {str(i): p for i, p in enumerate(probs) if p != 0}

    doc: Dict[str, Any] = {
        "format": MODEL_FORMAT,
        "name": name,
        "gamma": gamma,
        "actions": action_names,
        "states": labels,
        "start": start_doc,
        "terminal": terminal,
        "features": feature_names,
        "transitions": transitions,
        "rewards": {k: {"weights": dict(w)} for k, w in rewards.items()} if rewards is not None else {"default": {"weights": {f: 1.0 for f in feature_names}}},
    }
    if horizon is not None:
        doc["horizon"] = int(horizon)
    return doc


def export_tabular_model(P: Any, path: str, **kwargs: Any) -> Dict[str, Any]:
    """Write ``P[s][a] = [(prob, next_state, reward, terminated), ...]`` as a gapwatch-mdp/1 file.

    Keyword arguments (``intent``, ``gamma`` and ``start`` required):
      intent(s, a, next_state, terminated) -> float: the intended outcome of each transition.
      gamma: discount in (0, 1].  start: a state index, {state: prob}, or one probability per state.
      name, actions (names), states (labels), horizon: optional.
      features: {name: fn(s, a, next_state, reward, terminated) -> float}; default one feature "reward"
        equal to the table's reward.  rewards: {variant: {feature: weight}}; default one variant
        "default" weighting every feature 1.
    Outcomes of one (s, a) with the same next state, features and intent are merged (probabilities
    added); a state entered with terminated=True is absorbing (listed in "terminal", its own rows
    dropped), or, if it is also entered without termination, gets an absorbing copy "<label> (end)".
    Returns the document written.
    """
    doc = build_model_document(P, **kwargs)
    with open(path, "w", encoding="utf-8") as f:
        json.dump(doc, f, indent=1)
        f.write("\n")
    return doc
