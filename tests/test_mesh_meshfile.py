"""Native HDF5 mesh file: exact round trip, clear errors."""
import os

import h5py
import numpy as np
import pytest

from meshing import MeshError, box_mesh, cylinder_mesh, read_mesh, towers_mesh, write_mesh


def _same(a, b):
    assert a.name == b.name
    for k in ("geom", "corners", "vertices", "interior_faces"):
        x, y = getattr(a, k), getattr(b, k)
        assert x.dtype == y.dtype and x.shape == y.shape and np.array_equal(x, y)
    assert a.boundary_faces.keys() == b.boundary_faces.keys()
    for t in a.boundary_faces:
        assert np.array_equal(a.boundary_faces[t], b.boundary_faces[t])
    assert [(p, q, tuple(v)) for p, q, v in a.periodic] == [(p, q, tuple(v)) for p, q, v in b.periodic]


@pytest.mark.parametrize("make", [lambda: cylinder_mesh(n_radial=4, n_around=12, q=3),
                                  lambda: box_mesh(3, 2, q=2, warp=0.05, periodic=(True, False)),
                                  lambda: towers_mesh(q=2)])
def test_round_trip_exact(tmp_path, make):
    m = make()
    p = str(tmp_path / "m.h5")
    assert write_mesh(m, p) == p
    _same(m, read_mesh(p))
    assert [f for f in os.listdir(tmp_path) if "tmp" in f] == []  # no temporary left behind


def test_truncated_file(tmp_path):
    p = str(tmp_path / "m.h5")
    write_mesh(cylinder_mesh(n_radial=4, n_around=12), p)
    data = open(p, "rb").read()
    with open(p, "wb") as fh:
        fh.write(data[: len(data) // 3])
    with pytest.raises(MeshError, match=r"m\.h5: .*(not a readable HDF5|damaged)"):
        read_mesh(p)


def test_wrong_file(tmp_path):
    p = str(tmp_path / "other.h5")
    with h5py.File(p, "w") as f:
        f["x"] = np.arange(3)
    with pytest.raises(MeshError, match=r"other\.h5: not a quadfr mesh file"):
        read_mesh(p)
    t = tmp_path / "text.h5"
    t.write_text("hello")
    with pytest.raises(MeshError, match=r"text\.h5: not a readable HDF5 file"):
        read_mesh(str(t))
    with pytest.raises(MeshError, match="does not exist"):
        read_mesh(str(tmp_path / "none.h5"))


def test_newer_version_and_bad_ids(tmp_path):
    p = str(tmp_path / "m.h5")
    write_mesh(box_mesh(2, 2), p)
    with h5py.File(p, "a") as f:
        f.attrs["version"] = 99
    with pytest.raises(MeshError, match="version 99"):
        read_mesh(p)
    write_mesh(box_mesh(2, 2), p)
    with h5py.File(p, "a") as f:
        c = f["corners"][()]
        c[0, 0] = 1000
        f["corners"][...] = c
    with pytest.raises(MeshError, match="'corners' refers to vertices outside"):
        read_mesh(p)
