"""A small, checkpointable random stream for numba kernels.

numba's built-in ``np.random`` keeps its state hidden inside the compiled
code, so a run could not be stopped and resumed bit for bit.  Here the state
is an explicit ``uint64`` array of length 4 (xoshiro256**, Blackman and
Vigna 2018) that kernels take as an argument and advance in place; saving
the array saves the stream.

Functions
---------
make_state(seed)      -> ndarray, shape=(4,), uint64
uniform(state)        -> float in [0, 1)
normal(state)         -> standard normal variate (Box-Muller, one of the pair)
unit_vector(state)    -> (x, y, z) uniform on the unit sphere
"""
import numpy as np
from numba import njit

STATE_WORDS = 4


def make_state(seed):
    """Return a fresh xoshiro256** state derived from an integer seed.

    The seed is spread with NumPy's ``SeedSequence`` so that nearby seeds
    give unrelated streams.  ``seed`` may also be a sequence of integers
    (for example ``[study_seed, task_index]``).
    """
    words = np.random.SeedSequence(seed).generate_state(STATE_WORDS, dtype=np.uint64)
    if not np.any(words):  # the all-zero state is the one forbidden state
        words[0] = np.uint64(0x9E3779B97F4A7C15)
    return words.astype(np.uint64)


@njit(cache=True, inline="always")
def _rotl(x, k):
    return (x << np.uint64(k)) | (x >> np.uint64(64 - k))


@njit(cache=True)
def next_u64(s):
    """Advance the state in place and return the next 64-bit output."""
    result = _rotl(s[1] * np.uint64(5), 7) * np.uint64(9)
    t = s[1] << np.uint64(17)
    s[2] ^= s[0]
    s[3] ^= s[1]
    s[1] ^= s[2]
    s[0] ^= s[3]
    s[2] ^= t
    s[3] = _rotl(s[3], 45)
    return result


@njit(cache=True)
def uniform(s):
    """Uniform float64 in [0, 1) from the top 53 bits."""
    return float(next_u64(s) >> np.uint64(11)) * (1.0 / 9007199254740992.0)


@njit(cache=True)
def normal(s):
    """Standard normal variate by the Box-Muller transform."""
    u1 = uniform(s)
    while u1 <= 0.0:
        u1 = uniform(s)
    u2 = uniform(s)
    return np.sqrt(-2.0 * np.log(u1)) * np.cos(2.0 * np.pi * u2)


@njit(cache=True)
def fill_normal(s, out):
    """Fill a float64 array (any shape, C-contiguous) with normal variates."""
    flat = out.reshape(-1)
    for k in range(flat.size):
        flat[k] = normal(s)


@njit(cache=True)
def unit_vector(s):
    """A unit vector uniform on the sphere: cos(theta) and phi uniform (Archimedes'
    hat-box theorem; Allen and Tildesley, Computer Simulation of Liquids, 2nd ed. 2017,
    appendix E).  Draws cos(theta) first, then phi."""
    cz = 2.0 * uniform(s) - 1.0
    phi = 2.0 * np.pi * uniform(s)
    sn = np.sqrt(max(0.0, 1.0 - cz * cz))
    return sn * np.cos(phi), sn * np.sin(phi), cz
