"""Mesh check core: scaled Jacobian, inverted elements, sizes."""
import numpy as np
import pytest

from meshing import MeshError, box_mesh, check_mesh, mesh_quality, min_length_scale
from meshing.quality import element_sizes


@pytest.mark.parametrize("q", [1, 3])
def test_square_mesh_is_perfect(q):
    m = box_mesh(4, 4, (0, 2, 0, 2), q=q, periodic=False)
    qd = mesh_quality(m)
    assert abs(qd["scaled_jacobian_min"] - 1) < 1e-14 and abs(qd["scaled_jacobian_max"] - 1) < 1e-14
    assert qd["skewness_max"] < 1e-13 and abs(qd["aspect_ratio_max"] - 1) < 1e-13
    assert abs(qd["area"] - 4.0) < 1e-13
    assert np.allclose(element_sizes(m), 0.5) and abs(min_length_scale(m, 2) - 0.5 / 3) < 1e-14
    assert qd["n_elements"] == 16 and qd["n_vertices"] == 25 and qd["n_geometry_nodes"] == (4 * q + 1) ** 2
    assert qd["tags"] == {"bottom": 4, "left": 4, "right": 4, "top": 4}


def test_parallelogram_measures():
    # shear x += 0.5 y: angle between coordinate lines atan(1/0.5); sin = 1/sqrt(1.25)
    m = box_mesh(2, 2, (0, 1, 0, 1), q=1, periodic=False)
    m.geom[..., 0] += 0.5 * m.geom[..., 1]
    qd = mesh_quality(m)
    assert abs(qd["scaled_jacobian_min"] - 1 / np.sqrt(1.25)) < 1e-14
    assert abs(qd["skewness_max"] - 0.5 / np.sqrt(1.25)) < 1e-14


def test_inverted_element_flagged_by_id():
    m = box_mesh(3, 3, q=2, periodic=False)
    e = 4  # the middle element: push its centre node far outside, folding it
    m.geom[e, 1, 1] += np.array([0.0, 2.0])
    qd = mesh_quality(m)
    assert [i for i, _ in qd["inverted"]] == [e]
    with pytest.raises(MeshError, match=r"1 inverted element\(s\).*: 4 at \(0\.5, "):
        check_mesh(m)


def test_inverted_linear_element():
    m = box_mesh(2, 1, q=1, periodic=False)
    m.geom[1] = m.geom[1, ::-1]  # mirror element 1: clockwise
    with pytest.raises(MeshError, match=r": 1 at \(0\.75, 0\.5\)"):
        check_mesh(m)
