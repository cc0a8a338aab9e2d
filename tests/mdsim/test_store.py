"""HDF5 run files: growing datasets, checkpoints, completion and plain-data reading."""
import h5py
import numpy as np
import pytest

from mdsim.sampling import store
from mdsim.errors import SimulationError, StudyError


def make(tmp_path, **attrs):
    path = tmp_path / "run.h5"
    base = {"method": "mc-nvt", "temperature_red": 1.25, "n_particles": 100,
            "seed": np.array([7, 3]), "units_sigma_m": 3.405e-10, "flag": True}
    base.update(attrs)
    return path, store.RunWriter.create(path, base, chunk=8)


def test_write_grow_checkpoint_complete(tmp_path):
    path, w = make(tmp_path)
    assert store.part_path(path).exists() and not path.exists()
    gen = np.random.default_rng(0)
    blocks = [{"u_full": gen.normal(size=5), "pressure": gen.normal(size=5)} for _ in range(3)]
    for k, b in enumerate(blocks):
        w.append(b)
        state = {"positions": gen.random((4, 3)), "rng_state": np.arange(4, dtype=np.uint64) + k,
                 "max_displacement": 0.1 * k, "trial_moves": 10 * k, "method": "mc-nvt"}
        w.write_checkpoint(state, 5 * (k + 1), phase="production")
    assert w.n_samples == 15
    ds = w.file["samples/u_full"]
    assert ds.maxshape == (None,) and ds.chunks == (8,)   # resizable and chunked
    # a reader sees the flushed, unfinished file as incomplete
    assert not store.is_complete(store.part_path(path))
    w.write_final(np.ones((4, 3)), [5.0, 5.0, 5.0])
    assert w.complete() == path
    assert path.exists() and not store.part_path(path).exists()
    assert store.is_complete(path)

    run = store.read_run(path)
    assert run["complete"] is True
    assert np.array_equal(run["samples"]["u_full"], np.concatenate([b["u_full"] for b in blocks]))
    attrs = run["attrs"]
    assert attrs["method"] == "mc-nvt" and attrs["temperature_red"] == 1.25
    assert attrs["flag"] is True and attrs["n_particles"] == 100
    assert np.array_equal(attrs["seed"], [7, 3])
    assert attrs["version_numpy"] == np.__version__
    assert attrs["version_h5py"] == h5py.__version__
    state, info = run["checkpoint"]
    assert info == {"n_samples_done": 15, "phase": "production"}
    assert state["rng_state"].dtype == np.uint64
    assert np.array_equal(state["rng_state"], np.arange(4, dtype=np.uint64) + 2)
    assert state["max_displacement"] == pytest.approx(0.2)
    assert state["trial_moves"] == 20 and state["method"] == "mc-nvt"
    assert np.array_equal(run["final"]["positions"], np.ones((4, 3)))
    assert np.array_equal(store.read_samples(path)["pressure"], run["samples"]["pressure"])
    assert store.read_final(path)["box"].tolist() == [5.0, 5.0, 5.0]
    assert store.read_checkpoint(path)[1]["n_samples_done"] == 15


def test_checkpoint_rewritten_in_place(tmp_path):
    path, w = make(tmp_path)
    state = {"positions": np.zeros((500, 3)), "step": 0}
    w.write_checkpoint(state, 0)
    size0 = store.part_path(path).stat().st_size
    for k in range(20):
        w.write_checkpoint({"positions": np.full((500, 3), float(k)), "step": k}, k)
    size1 = store.part_path(path).stat().st_size
    # same shapes are overwritten, not re-allocated: the file does not grow per checkpoint
    assert size1 == size0
    # an entry that disappears from the state disappears from the checkpoint
    w.write_checkpoint({"step": 99}, 0)
    assert set(w.read_checkpoint()[0]) == {"step"}
    w.close()


def test_resume_truncates_to_checkpoint(tmp_path):
    path, w = make(tmp_path)
    w.append({"x": np.arange(10.0)})
    w.write_checkpoint({"a": np.zeros(2)}, 10)
    w.append({"x": np.arange(10.0, 14.0)})   # written after the checkpoint, then "killed"
    w.close()
    w2 = store.RunWriter.reopen(path)
    state, info = w2.read_checkpoint()
    w2.truncate(info["n_samples_done"])
    assert w2.n_samples == 10
    w2.append({"x": np.arange(10.0, 12.0)})
    w2.complete()
    assert np.array_equal(store.read_samples(path)["x"], np.arange(12.0))


def test_bad_inputs(tmp_path):
    path, w = make(tmp_path)
    with pytest.raises(ValueError, match="one length"):
        w.append({"a": np.zeros(3), "b": np.zeros(4)})
    w.append({"a": np.zeros(3)})
    with pytest.raises(ValueError, match="differ"):
        w.append({"b": np.zeros(3)})
    with pytest.raises(TypeError, match="cannot be stored"):
        w.set_attrs({"bad": {"nested": 1}})
    with pytest.raises(TypeError, match="numeric"):
        w.write_checkpoint({"obj": np.array([object()])}, 0)
    w.close()
    with pytest.raises(StudyError, match="does not exist"):
        store.read_run(tmp_path / "nothing.h5")
    (tmp_path / "junk.h5").write_text("not hdf5")
    with pytest.raises(StudyError, match="not a readable HDF5"):
        store.read_attrs(tmp_path / "junk.h5")
    assert not store.is_complete(tmp_path / "junk.h5")
    (tmp_path / "junk2.h5.part").write_text("not hdf5")
    with pytest.raises(SimulationError, match="delete it"):
        store.RunWriter.reopen(tmp_path / "junk2.h5")


def test_no_pickled_data(tmp_path):
    path, w = make(tmp_path, note="text", names=["a", "b"])
    w.append({"x": np.arange(3.0)})
    w.write_checkpoint({"positions": np.zeros((2, 3))}, 3)
    w.complete()
    kinds = []
    with h5py.File(path, "r") as f:
        f.visititems(lambda name, obj: kinds.append(obj.dtype.kind)
                     if isinstance(obj, h5py.Dataset) else None)
    assert kinds and set(kinds) <= set("biuf")   # numbers only, never opaque or object data
    assert store.read_attrs(path)["names"] == ["a", "b"]
