"""Reference figures for the `solver` benchmark section: policy iteration (R. Howard, Dynamic
Programming and Markov Processes, MIT Press, 1960) with a sparse direct solve per evaluation
(scipy.sparse.linalg.spsolve), and the uniformly random policy's reach probabilities and expected
length, each one sparse linear system.

Reads the subset of spec format v1 that scripts/bench/generators.ts writes: "states" with
"terminal", a default "actions" list or per-state lists, "transitions" whose "to" is a state id, a
map id -> probability or a list of {state, probability, reward}, and a numeric reward. Prints one
JSON object: the solve time in seconds (loading the file excluded), the number of policy
improvement rounds, the start's optimal value, the random policy's probabilities of ending in a
goal and in a failure, and its expected number of steps.

Usage: python3 scipy-policy-iteration.py SPEC.mdp.json
"""

import json
import sys
import time

import numpy as np
import scipy.sparse as sp
from scipy.sparse.linalg import spsolve


def load(path):
    with open(path, encoding="utf-8") as handle:
        spec = json.load(handle)
    ids = list(spec["states"].keys())
    terminal = {sid: (spec["states"][sid] or {}).get("terminal") for sid in ids}
    live = [sid for sid in ids if terminal[sid] is None]
    index = {sid: i for i, sid in enumerate(live)}
    rows, cols, probs = [], [], []
    choice_state, choice_reward, choice_goal, choice_failure = [], [], [], []
    seen = set()
    for transition in spec["transitions"]:
        source = transition["from"]
        if terminal.get(source) is not None or (source, transition["action"]) in seen:
            continue
        seen.add((source, transition["action"]))
        default_reward = transition.get("reward", 0)
        to = transition["to"]
        if isinstance(to, str):
            outcomes = [(to, 1.0, default_reward)]
        elif isinstance(to, dict):
            outcomes = [(target, p, default_reward) for target, p in to.items()]
        else:
            outcomes = [(o["state"], o["probability"], o.get("reward", default_reward)) for o in to]
        c = len(choice_state)
        choice_state.append(index[source])
        expected, goal, failure = 0.0, 0.0, 0.0
        for target, p, reward in outcomes:
            expected += p * reward
            kind = terminal[target]
            if kind is None:
                rows.append(c)
                cols.append(index[target])
                probs.append(p)
            elif kind == "goal":
                goal += p
            elif kind == "failure":
                failure += p
        choice_reward.append(expected)
        choice_goal.append(goal)
        choice_failure.append(failure)
    n, m = len(live), len(choice_state)
    transitions = sp.csr_matrix((probs, (rows, cols)), shape=(m, n))
    return {
        "spec": spec,
        "n": n,
        "start": index[spec["start"]],
        "maximize": spec.get("objective", "maximize") != "minimize",
        "discount": float(spec["discount"]),
        "P": transitions,
        "state": np.array(choice_state, dtype=np.int64),
        "reward": np.array(choice_reward),
        "goal": np.array(choice_goal),
        "failure": np.array(choice_failure),
    }


def proper_policy(model):
    """A choice per state from which a terminal is reached with probability 1: rank states by
    backward search from the terminals and pick a choice that can move to a lower rank."""
    n, P = model["n"], model["P"]
    state = model["state"]
    ends = (model["goal"] + model["failure"]) > 0
    exits = np.asarray(P.sum(axis=1)).ravel() < 1 - 1e-12
    policy = np.full(n, -1, dtype=np.int64)
    ranked = np.zeros(n, dtype=bool)
    frontier = []
    for c in np.nonzero(ends | exits)[0]:
        s = state[c]
        if not ranked[s]:
            ranked[s] = True
            policy[s] = c
            frontier.append(s)
    into = P.tocsc()
    while frontier:
        following = []
        for t in frontier:
            for c in into.indices[into.indptr[t] : into.indptr[t + 1]]:
                s = state[c]
                if not ranked[s]:
                    ranked[s] = True
                    policy[s] = c
                    following.append(s)
        frontier = following
    # States that cannot end (none in the generated specs) keep their first choice.
    first = np.full(n, -1, dtype=np.int64)
    first[state[::-1]] = np.arange(len(state))[::-1]
    policy[policy < 0] = first[policy < 0]
    return policy


def policy_iteration(model):
    n, P, state, reward, gamma = model["n"], model["P"], model["state"], model["reward"], model["discount"]
    sign = 1.0 if model["maximize"] else -1.0
    policy = proper_policy(model)
    identity = sp.identity(n, format="csr")
    rounds = 0
    while True:
        rounds += 1
        values = spsolve((identity - gamma * P[policy]).tocsc(), reward[policy])
        q = sign * (reward + gamma * (P @ values))
        best = np.full(n, -np.inf)
        np.maximum.at(best, state, q)
        current = q[policy]
        # Keep the current choice unless another one is better by more than rounding.
        improvable = best > current + 1e-10 * (1 + np.abs(current))
        if not improvable.any() or rounds >= 1000:
            return values, rounds
        candidates = np.nonzero(q >= best[state] - 1e-12 * (1 + np.abs(best[state])))[0]
        chosen = policy.copy()
        chosen[state[candidates[::-1]]] = candidates[::-1]
        policy = np.where(improvable, chosen, policy)


def random_policy(model):
    n, m, P, state = model["n"], len(model["state"]), model["P"], model["state"]
    counts = np.bincount(state, minlength=n).astype(float)
    average = sp.csr_matrix((1.0 / counts[state], (state, np.arange(m))), shape=(n, m))
    system = (sp.identity(n, format="csr") - average @ P).tocsc()
    goal = spsolve(system, average @ model["goal"])
    failure = spsolve(system, average @ model["failure"])
    length = spsolve(system, np.ones(n))
    return goal, failure, length


def main():
    model = load(sys.argv[1])
    began = time.perf_counter()
    values, rounds = policy_iteration(model)
    goal, failure, length = random_policy(model)
    seconds = time.perf_counter() - began
    s = model["start"]
    print(json.dumps({
        "seconds": seconds,
        "rounds": rounds,
        "optimal": float(values[s]),
        "reachGoal": float(goal[s]),
        "reachFailure": float(failure[s]),
        "length": float(length[s]),
    }))


if __name__ == "__main__":
    main()
