"""Planned FFT pairs and the dipolar field through each FFT library."""

import numpy as np
import pytest

from thinfilm.engines.dipolar import DipolarField, cache_clear
from thinfilm.engines.fft_plan import RealFFTPair, fftw_available
from thinfilm.input.units import MU_B_J_PER_T
from thinfilm.model.lattice import Lattice

BACKENDS = ["scipy"] + (["fftw"] if fftw_available() else [])


@pytest.mark.parametrize("backend", BACKENDS)
@pytest.mark.parametrize("dtype, tol", [(np.float64, 1e-12), (np.float32, 1e-5)])
@pytest.mark.parametrize("shape", [(3, 1, 6, 10), (3, 2, 5, 7), (2, 1, 1, 8)])
def test_pair_matches_numpy_fft_unnormalised(backend, dtype, tol, shape, rng):
    # reference: numpy.fft.rfft2 / irfft2 (a general-purpose reference library); both of our
    # transforms are unnormalised, so backward(forward(x)) = fy fx x
    pair = RealFFTPair(shape, dtype, 1, backend=backend)
    x = rng.standard_normal(shape)
    pair.real_in[...] = x
    spec = pair.forward()
    ref = np.fft.rfft2(x)
    assert np.max(np.abs(spec - ref)) < tol * np.max(np.abs(ref))
    pair.spectrum[...] = ref
    back = pair.backward()
    assert np.max(np.abs(back - x * pair.n_points)) < tol * pair.n_points * np.max(np.abs(x))


def test_pair_input_errors():
    with pytest.raises(ValueError, match="float64 or float32"):
        RealFFTPair((4, 4), np.int64)
    with pytest.raises(ValueError, match="backend"):
        RealFFTPair((4, 4), np.float64, backend="cufft")


@pytest.mark.skipif(not fftw_available(), reason="pyFFTW not installed")
@pytest.mark.parametrize("shape, periodic", [("square", True), ("square", False),
                                             ("triangular", True), ("honeycomb", False)])
def test_dipolar_field_same_with_either_library(shape, periodic, rng):
    # the two FFT libraries must give one field to round-off (exact same convolution)
    lat = Lattice(shape, 8, 6, 0.4, periodic)
    s = rng.standard_normal((lat.ny, lat.nx, 3))
    s /= np.linalg.norm(s, axis=-1, keepdims=True)
    cache_clear()
    a = DipolarField(lat, 3 * MU_B_J_PER_T, backend="fftw").field(s)
    b = DipolarField(lat, 3 * MU_B_J_PER_T, backend="scipy").field(s)
    assert np.max(np.abs(a - b)) < 1e-12 * np.max(np.abs(b))


def test_planes_buffer_is_reused_and_planes_is_a_copy(rng):
    lat = Lattice("square", 6, 6, 0.4, True)
    d = DipolarField(lat, MU_B_J_PER_T)
    s = rng.standard_normal((6, 6, 3))
    s /= np.linalg.norm(s, axis=-1, keepdims=True)
    first = d.planes(s)
    buf = d.planes_buffer(s)
    assert np.array_equal(first, buf)
    d.planes_buffer(-s)  # overwrites the buffer, not the copy
    assert np.array_equal(buf, -first) and not np.array_equal(first, buf)


@pytest.mark.skipif(not fftw_available(), reason="pyFFTW not installed")
def test_plan_choice_and_wisdom_are_kept_for_the_next_process(tmp_path, monkeypatch, rng):
    # a new process (here: FFTW's wisdom forgotten) rebuilds the stored choice of plan and
    # gets the same transform bit for bit
    import json

    import pyfftw

    from thinfilm.engines import fft_wisdom

    monkeypatch.setenv("THINFILM_FFT_CACHE", str(tmp_path))
    shape = (3, 1, 8, 12)
    a = RealFFTPair(shape, np.float32, 1, backend="fftw")
    data = json.loads(fft_wisdom.cache_path().read_text())
    assert len(data["choices"]) == 2 and data["wisdom"]
    x = rng.standard_normal(shape)
    a.real_in[...] = x
    first = a.forward().copy()
    stored = dict(data["choices"])
    for forced, kind in [(1, "per-grid"), (0, "batched")]:
        data["choices"] = {k: forced for k in stored}
        fft_wisdom.cache_path().write_text(json.dumps(data))
        pyfftw.forget_wisdom()
        assert RealFFTPair(shape, np.float32, 1, backend="fftw").plan_kinds == (kind, kind)
    data["choices"] = stored
    fft_wisdom.cache_path().write_text(json.dumps(data))
    pyfftw.forget_wisdom()
    c = RealFFTPair(shape, np.float32, 1, backend="fftw")
    assert c.plan_kinds == a.plan_kinds
    c.real_in[...] = x
    assert np.array_equal(c.forward(), first)


@pytest.mark.skipif(not fftw_available(), reason="pyFFTW not installed")
def test_an_unreadable_plan_cache_is_measured_afresh(tmp_path, monkeypatch):
    from thinfilm.engines import fft_wisdom

    monkeypatch.setenv("THINFILM_FFT_CACHE", str(tmp_path))
    fft_wisdom.cache_path().parent.mkdir(parents=True, exist_ok=True)
    fft_wisdom.cache_path().write_text("{not json")
    pair = RealFFTPair((2, 1, 4, 6), np.float64, 1, backend="fftw")
    assert set(pair.plan_kinds) <= {"batched", "per-grid"}
    assert fft_wisdom.load()[1]  # rewritten as a valid cache
