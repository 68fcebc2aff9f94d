#!/usr/bin/env python3
"""The peers for scripts/bench: W1 and W2 written the way a practitioner
would write them, with the same task, features and updates as critbox's core,
so the bench can compare speed. Two styles of each:

- `w1`, `w2`: a per-step Python loop over NumPy arrays;
- `w1-jit`, `w2-jit`: the same algorithm per step, written as plain loops
  and compiled by Numba (an LLVM JIT for numeric Python). Compilation is done
  before the clock starts (one short warm-up call), so the figure is the
  compiled code's speed, as a practitioner's long run would see it. The
  compiled code is cached under bench/.venv/numba-cache.

W1: cart-pole, one-step A2C, linear softmax actor and linear critic over tile
    coding (8 tilings, 8 intervals per variable, hashed into 4096 weights,
    the core's hash and tiling offsets), step sizes divided by the number of
    tilings as the core does, gamma 0.99, episodes capped at 500 steps
    (truncation bootstraps, termination does not).
W2: cart-pole, one-step A2C, MLP actor (4-64-64-2) and critic (4-64-64-1),
    tanh hidden layers, inputs scaled to [-1, 1] over the typical ranges,
    plain SGD, one update per step.

usage: peer.py w1|w2|w1-jit|w2-jit STEPS [SEED]   prints one JSON line:
       {"workload", "steps", "seconds", "steps_per_sec", "episodes"}
Timing only: the random numbers are NumPy's (Numba's own generator in the
compiled peers), so the learning curve is not the core's, but the work per
step is the same.
"""
import json
import math
import os
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


# ---- The compiled peers (Numba). Imported only when asked for, so the NumPy
# peer runs without Numba installed.


def jit_peer(name):
    """The compiled runner for `w1-jit` or `w2-jit`: run(steps, seed) -> episodes."""
    os.environ.setdefault("NUMBA_CACHE_DIR", os.path.join(os.path.dirname(os.path.abspath(__file__)), ".venv", "numba-cache"))
    from numba import njit, uint64

    low = LOW.copy()
    high = HIGH.copy()
    theta_limit = THETA_LIMIT

    @njit(cache=True)
    def cp_step(s, action, out):
        """Barto, Sutton & Anderson (1983) Euler step into `out`; returns terminated."""
        force = FORCE if action == 1 else -FORCE
        total = CART_MASS + POLE_MASS
        pml = POLE_MASS * HALF_LENGTH
        sn, cs = math.sin(s[2]), math.cos(s[2])
        temp = (force + pml * s[3] * s[3] * sn) / total
        theta_acc = (GRAVITY * sn - cs * temp) / (HALF_LENGTH * (4.0 / 3.0 - POLE_MASS * cs * cs / total))
        x_acc = temp - pml * theta_acc * cs / total
        out[0] = s[0] + TAU * s[1]
        out[1] = s[1] + TAU * x_acc
        out[2] = s[2] + TAU * s[3]
        out[3] = s[3] + TAU * theta_acc
        return abs(out[0]) > X_LIMIT or abs(out[2]) > theta_limit

    @njit(cache=True)
    def tiles(s, scale, shift, n, m, size, out):
        """The core's tile coder: the same coordinates and hash as Tiles.active."""
        d = s.shape[0]
        mask = uint64(size - 1)
        for k in range(n):
            h = uint64(0xCBF29CE484222325) ^ uint64(k)
            for i in range(d):
                u = (s[i] - low[i]) * scale[i]
                if u > m:
                    u = float(m)
                elif not u >= 0.0:
                    u = 0.0
                c = int(u + shift[k, i])
                if c > m:
                    c = m
                h = (h ^ uint64(c)) * uint64(0x00000100000001B3)
            h ^= h >> uint64(33)
            h = h * uint64(0xFF51AFD7ED558CCD)
            h ^= h >> uint64(33)
            out[k] = h & mask

    @njit(cache=True)
    def softmax_sample(z, pi):
        """pi = softmax(z) (shifted by the largest z), then an action drawn from pi."""
        top = z[0]
        for b in range(1, z.shape[0]):
            top = max(top, z[b])
        total = 0.0
        for b in range(z.shape[0]):
            pi[b] = math.exp(z[b] - top)
            total += pi[b]
        for b in range(z.shape[0]):
            pi[b] /= total
        u = np.random.random()
        acc = 0.0
        for b in range(z.shape[0] - 1):
            acc += pi[b]
            if u < acc:
                return b
        return z.shape[0] - 1

    @njit(cache=True)
    def w1_jit(steps, seed, scale, shift):
        np.random.seed(seed)
        n, m, size, k_act = 8, 8, 4096, 2
        a_step, c_step = 0.1 / n, 0.2 / n
        v = np.zeros(size)
        theta = np.zeros((size, k_act))
        s, s2 = np.empty(4), np.empty(4)
        phi = np.empty(n, dtype=np.uint64)
        phi2 = np.empty(n, dtype=np.uint64)
        z, pi = np.empty(k_act), np.empty(k_act)
        for i in range(4):
            s[i] = np.random.uniform(-0.05, 0.05)
        tiles(s, scale, shift, n, m, size, phi)
        z[:] = 0.0
        for k in range(n):
            for b in range(k_act):
                z[b] += theta[phi[k], b]
        a = softmax_sample(z, pi)
        episodes = 0
        t = 0
        for _ in range(steps):
            term = cp_step(s, a, s2)
            t += 1
            trunc = (not term) and t >= MAX_STEPS
            tiles(s2, scale, shift, n, m, size, phi2)
            v2 = 0.0
            if not term:
                for k in range(n):
                    v2 += v[phi2[k]]
            v1 = 0.0
            for k in range(n):
                v1 += v[phi[k]]
            delta = 1.0 + GAMMA * v2 - v1
            for k in range(n):
                j = phi[k]
                v[j] += c_step * delta
                for b in range(k_act):
                    g = (1.0 if b == a else 0.0) - pi[b]
                    theta[j, b] += a_step * delta * g
            if term or trunc:
                episodes += 1
                for i in range(4):
                    s2[i] = np.random.uniform(-0.05, 0.05)
                t = 0
                tiles(s2, scale, shift, n, m, size, phi2)
            s, s2 = s2, s
            phi, phi2 = phi2, phi
            z[:] = 0.0
            for k in range(n):
                for b in range(k_act):
                    z[b] += theta[phi[k], b]
            a = softmax_sample(z, pi)
        return episodes

    @njit(cache=True)
    def forward(W1, b1, W2, b2, W3, b3, x, h1, h2, out):
        for j in range(W1.shape[0]):
            z = b1[j]
            for i in range(W1.shape[1]):
                z += W1[j, i] * x[i]
            h1[j] = math.tanh(z)
        for j in range(W2.shape[0]):
            z = b2[j]
            for i in range(W2.shape[1]):
                z += W2[j, i] * h1[i]
            h2[j] = math.tanh(z)
        for j in range(W3.shape[0]):
            z = b3[j]
            for i in range(W3.shape[1]):
                z += W3[j, i] * h2[i]
            out[j] = z

    @njit(cache=True)
    def ascend(W1, b1, W2, b2, W3, b3, x, h1, h2, g3, step, g2, g1):
        """One SGD step along g3 . d out / d weights (back-propagated before each layer's update)."""
        for i in range(W3.shape[1]):
            z = 0.0
            for j in range(W3.shape[0]):
                z += W3[j, i] * g3[j]
            g2[i] = z * (1.0 - h2[i] * h2[i])
        for j in range(W3.shape[0]):
            for i in range(W3.shape[1]):
                W3[j, i] += step * g3[j] * h2[i]
            b3[j] += step * g3[j]
        for i in range(W2.shape[1]):
            z = 0.0
            for j in range(W2.shape[0]):
                z += W2[j, i] * g2[j]
            g1[i] = z * (1.0 - h1[i] * h1[i])
        for j in range(W2.shape[0]):
            for i in range(W2.shape[1]):
                W2[j, i] += step * g2[j] * h1[i]
            b2[j] += step * g2[j]
        for j in range(W1.shape[0]):
            for i in range(W1.shape[1]):
                W1[j, i] += step * g1[j] * x[i]
            b1[j] += step * g1[j]

    @njit(cache=True)
    def glorot(n_out, n_in):
        lim = math.sqrt(6.0 / (n_in + n_out))
        w = np.empty((n_out, n_in))
        for j in range(n_out):
            for i in range(n_in):
                w[j, i] = np.random.uniform(-lim, lim)
        return w

    @njit(cache=True)
    def w2_jit(steps, seed):
        np.random.seed(seed)
        H = 64
        aW1, aW2, aW3 = glorot(H, 4), glorot(H, H), glorot(2, H)
        ab1, ab2, ab3 = np.zeros(H), np.zeros(H), np.zeros(2)
        cW1, cW2, cW3 = glorot(H, 4), glorot(H, H), glorot(1, H)
        cb1, cb2, cb3 = np.zeros(H), np.zeros(H), np.zeros(1)
        a_step, c_step = 0.01, 0.01
        ah1, ah2, aout = np.empty(H), np.empty(H), np.empty(2)
        ch1, ch2, cout = np.empty(H), np.empty(H), np.empty(1)
        nh1, nh2, nout = np.empty(H), np.empty(H), np.empty(1)
        g1, g2 = np.empty(H), np.empty(H)
        ga, gc = np.empty(2), np.empty(1)
        s, s2 = np.empty(4), np.empty(4)
        x, x2 = np.empty(4), np.empty(4)
        for i in range(4):
            s[i] = np.random.uniform(-0.05, 0.05)
            x[i] = 2.0 * (s[i] - low[i]) / (high[i] - low[i]) - 1.0
        pi = np.empty(2)
        forward(aW1, ab1, aW2, ab2, aW3, ab3, x, ah1, ah2, aout)
        a = softmax_sample(aout, pi)
        episodes = 0
        t = 0
        for _ in range(steps):
            term = cp_step(s, a, s2)
            t += 1
            trunc = (not term) and t >= MAX_STEPS
            for i in range(4):
                x2[i] = 2.0 * (s2[i] - low[i]) / (high[i] - low[i]) - 1.0
            forward(cW1, cb1, cW2, cb2, cW3, cb3, x, ch1, ch2, cout)
            v2 = 0.0
            if not term:
                forward(cW1, cb1, cW2, cb2, cW3, cb3, x2, nh1, nh2, nout)
                v2 = nout[0]
            delta = 1.0 + GAMMA * v2 - cout[0]
            gc[0] = delta
            ascend(cW1, cb1, cW2, cb2, cW3, cb3, x, ch1, ch2, gc, c_step, g2, g1)
            for b in range(2):
                ga[b] = delta * ((1.0 if b == a else 0.0) - pi[b])
            ascend(aW1, ab1, aW2, ab2, aW3, ab3, x, ah1, ah2, ga, a_step, g2, g1)
            if term or trunc:
                episodes += 1
                for i in range(4):
                    s2[i] = np.random.uniform(-0.05, 0.05)
                    x2[i] = 2.0 * (s2[i] - low[i]) / (high[i] - low[i]) - 1.0
                t = 0
            s, s2 = s2, s
            x, x2 = x2, x
            forward(aW1, ab1, aW2, ab2, aW3, ab3, x, ah1, ah2, aout)
            a = softmax_sample(aout, pi)
        return episodes

    if name == "w1-jit":
        t = Tiles()
        scale, shift = t.scale.copy(), t.shift.copy()
        return lambda steps, seed: w1_jit(steps, seed, scale, shift)
    return w2_jit


RUNS = {"w1": w1, "w2": w2, "w1-jit": None, "w2-jit": None}


def main(argv):
    if len(argv) < 2 or argv[0] not in RUNS:
        print("usage: peer.py w1|w2|w1-jit|w2-jit STEPS [SEED]", file=sys.stderr)
        return 2
    try:
        steps = int(argv[1])
        seed = int(argv[2]) if len(argv) > 2 else 7
    except ValueError:
        print(f"peer.py: STEPS and SEED must be whole numbers, got {argv[1:]}", file=sys.stderr)
        return 2
    if argv[0].endswith("-jit"):
        run = jit_peer(argv[0])
        run(100, seed)  # compiles (or loads the cache) before the clock starts
        t0 = time.perf_counter()
        episodes = run(steps, seed)
        secs = time.perf_counter() - t0
    else:
        rng = np.random.default_rng(seed)
        t0 = time.perf_counter()
        episodes = RUNS[argv[0]](steps, rng)
        secs = time.perf_counter() - t0
    print(json.dumps({"workload": argv[0], "steps": steps, "seconds": secs,
                      "steps_per_sec": steps / secs, "episodes": episodes}))
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
