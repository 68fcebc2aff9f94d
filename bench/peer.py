#!/usr/bin/env python3
"""The NumPy peer for scripts/bench: W1 and W2 written the way a practitioner
would write them in a per-step Python loop with NumPy, with the same task,
features and updates as critbox's core, so the bench can compare speed.

W1: cart-pole, one-step A2C, linear softmax actor and linear critic over tile
    coding (8 tilings, 8 intervals per variable, hashed into 4096 weights,
    the core's hash and tiling offsets), step sizes divided by the number of
    tilings as the core does, gamma 0.99, episodes capped at 500 steps
    (truncation bootstraps, termination does not).
W2: cart-pole, one-step A2C, MLP actor (4-64-64-2) and critic (4-64-64-1),
    tanh hidden layers, inputs scaled to [-1, 1] over the typical ranges,
    plain SGD, one update per step.

usage: peer.py w1|w2 STEPS [SEED]   prints one JSON line:
       {"workload", "steps", "seconds", "steps_per_sec", "episodes"}
Timing only: the random numbers are NumPy's, so the learning curve is not
the core's, but the work per step is the same.
"""
import json
import math
import sys
import time

import numpy as np

GRAVITY, CART_MASS, POLE_MASS, HALF_LENGTH, FORCE, TAU = 9.8, 1.0, 0.1, 0.5, 10.0, 0.02
THETA_LIMIT = 12.0 * 2.0 * math.pi / 360.0
X_LIMIT = 2.4
LOW = np.array([-X_LIMIT, -3.0, -THETA_LIMIT, -3.5])
HIGH = -LOW
MAX_STEPS = 500
GAMMA = 0.99
MASK = (1 << 64) - 1


def cartpole_step(s, action):
    """Barto, Sutton & Anderson (1983) Euler step, as crate/core/src/task/cartpole.rs."""
    x, x_dot, theta, theta_dot = s
    force = FORCE if action == 1 else -FORCE
    total = CART_MASS + POLE_MASS
    pml = POLE_MASS * HALF_LENGTH
    sin, cos = math.sin(theta), math.cos(theta)
    temp = (force + pml * theta_dot * theta_dot * sin) / total
    theta_acc = (GRAVITY * sin - cos * temp) / (HALF_LENGTH * (4.0 / 3.0 - POLE_MASS * cos * cos / total))
    x_acc = temp - pml * theta_acc * cos / total
    s = np.array([x + TAU * x_dot, x_dot + TAU * x_acc, theta + TAU * theta_dot, theta_dot + TAU * theta_acc])
    terminated = abs(s[0]) > X_LIMIT or abs(s[2]) > THETA_LIMIT
    return s, 1.0, terminated


class Tiles:
    """The core's tile coder (approx/tiles.rs): offsets k(2i+1)/n, hashed coordinates."""

    def __init__(self, tilings=8, intervals=8, size=4096):
        self.n, self.m, self.size = tilings, intervals, size
        self.scale = intervals / (HIGH - LOW)
        d = len(LOW)
        self.shift = np.array([[((k * (2 * i + 1)) % tilings) / tilings for i in range(d)] for k in range(tilings)])

    def active(self, s):
        u = np.clip((s - LOW) * self.scale, 0.0, self.m)
        coords = np.minimum(np.floor(u[None, :] + self.shift), self.m).astype(np.int64)
        out = np.empty(self.n, dtype=np.int64)
        for k in range(self.n):
            h = 0xCBF29CE484222325 ^ k
            for c in coords[k]:
                h = ((h ^ int(c)) * 0x00000100000001B3) & MASK
            h ^= h >> 33
            h = (h * 0xFF51AFD7ED558CCD) & MASK
            h ^= h >> 33
            out[k] = h % self.size
        return out


def softmax(z):
    z = z - z.max()
    e = np.exp(z)
    return e / e.sum()


def w1(steps, rng):
    tiles = Tiles()
    a_step, c_step = 0.1 / tiles.n, 0.2 / tiles.n
    v = np.zeros(tiles.size)
    theta = np.zeros((tiles.size, 2))
    episodes = 0
    s = rng.uniform(-0.05, 0.05, 4)
    t = 0
    phi = tiles.active(s)
    pi = softmax(theta[phi].sum(axis=0))
    a = rng.choice(2, p=pi)
    for _ in range(steps):
        s2, r, term = cartpole_step(s, a)
        t += 1
        trunc = not term and t >= MAX_STEPS
        phi2 = tiles.active(s2)
        v2 = 0.0 if term else v[phi2].sum()
        delta = r + GAMMA * v2 - v[phi].sum()
        v[phi] += c_step * delta
        grad = -pi
        grad[a] += 1.0
        theta[phi] += a_step * delta * grad
        if term or trunc:
            episodes += 1
            s2 = rng.uniform(-0.05, 0.05, 4)
            t = 0
            phi2 = tiles.active(s2)
        s, phi = s2, phi2
        pi = softmax(theta[phi].sum(axis=0))
        a = rng.choice(2, p=pi)
    return episodes


class Mlp:
    """Tanh MLP with a linear output layer and hand-written backprop (approx/mlp.rs)."""

    def __init__(self, sizes, rng):
        self.W, self.b = [], []
        for n_in, n_out in zip(sizes[:-1], sizes[1:]):
            lim = math.sqrt(6.0 / (n_in + n_out))
            self.W.append(rng.uniform(-lim, lim, (n_out, n_in)))
            self.b.append(np.zeros(n_out))

    def forward(self, x):
        acts = [x]
        for i, (W, b) in enumerate(zip(self.W, self.b)):
            z = W @ acts[-1] + b
            acts.append(z if i == len(self.W) - 1 else np.tanh(z))
        return acts

    def ascend(self, acts, g_out, step):
        """Adds step * (g_out . d out / d weights) to the weights (one SGD step)."""
        g = g_out
        for i in range(len(self.W) - 1, -1, -1):
            gW = np.outer(g, acts[i])
            gb = g
            if i > 0:
                g = (self.W[i].T @ g) * (1.0 - acts[i] * acts[i])
            self.W[i] += step * gW
            self.b[i] += step * gb


def w2(steps, rng):
    actor = Mlp([4, 64, 64, 2], rng)
    critic = Mlp([4, 64, 64, 1], rng)
    a_step, c_step = 0.01, 0.01
    scale = lambda s: 2.0 * (s - LOW) / (HIGH - LOW) - 1.0
    episodes = 0
    s = rng.uniform(-0.05, 0.05, 4)
    t = 0
    x = scale(s)
    pa = actor.forward(x)
    pi = softmax(pa[-1])
    a = rng.choice(2, p=pi)
    for _ in range(steps):
        s2, r, term = cartpole_step(s, a)
        t += 1
        trunc = not term and t >= MAX_STEPS
        x2 = scale(s2)
        ca = critic.forward(x)
        v2 = 0.0 if term else critic.forward(x2)[-1][0]
        delta = r + GAMMA * v2 - ca[-1][0]
        critic.ascend(ca, np.array([delta]), c_step)
        grad = -pi
        grad[a] += 1.0
        actor.ascend(pa, delta * grad, a_step)
        if term or trunc:
            episodes += 1
            s2 = rng.uniform(-0.05, 0.05, 4)
            t = 0
            x2 = scale(s2)
        s, x = s2, x2
        pa = actor.forward(x)
        pi = softmax(pa[-1])
        a = rng.choice(2, p=pi)
    return episodes


def main(argv):
    if len(argv) < 2 or argv[0] not in ("w1", "w2"):
        print("usage: peer.py w1|w2 STEPS [SEED]", file=sys.stderr)
        return 2
    try:
        steps = int(argv[1])
        seed = int(argv[2]) if len(argv) > 2 else 7
    except ValueError:
        print(f"peer.py: STEPS and SEED must be whole numbers, got {argv[1:]}", file=sys.stderr)
        return 2
    rng = np.random.default_rng(seed)
    t0 = time.perf_counter()
    episodes = (w1 if argv[0] == "w1" else w2)(steps, rng)
    secs = time.perf_counter() - t0
    print(json.dumps({"workload": argv[0], "steps": steps, "seconds": secs,
                      "steps_per_sec": steps / secs, "episodes": episodes}))
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
