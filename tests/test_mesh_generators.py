"""Every generator: valid, fully tagged meshes; registry behaviour; keyword-only signatures."""
import inspect

import numpy as np
import pytest

from meshing import GENERATORS, generator_names, make_mesh, mesh_quality
from meshing.quality import face_points

SMALL = {
    "box": dict(nx=3, ny=2),
    "cylinder": dict(n_radial=4, n_around=16),
    "naca": dict(n_radial=10, n_around=32),
    "plate": dict(nx_plate=8, nx_upstream=4, ny=6),
    "blocks": dict(wall_spacing=0.2, max_spacing=3.0),
    "towers": dict(wall_spacing=0.2, max_spacing=3.0),
}


def test_registry_names():
    assert set(generator_names()) >= {"box", "cylinder", "naca", "section", "plate", "blocks"}


@pytest.mark.parametrize("name", sorted(GENERATORS))
def test_signature_keyword_only_annotated(name):
    for p in inspect.signature(GENERATORS[name]).parameters.values():
        assert p.kind is p.KEYWORD_ONLY and p.default is not p.empty
        assert p.annotation is not p.empty and not isinstance(p.annotation, str)


@pytest.mark.parametrize("name", sorted(SMALL))
@pytest.mark.parametrize("q", [1, 2, 4])
def test_valid_and_tagged(name, q):
    m = make_mesh(name, q=q, **SMALL[name])
    qd = mesh_quality(m)
    assert qd["inverted"] == [] and qd["scaled_jacobian_min"] > 0
    # every face is either interior (counted twice) or in exactly one boundary tag
    nb = sum(len(f) for f in m.boundary_faces.values())
    assert 2 * len(m.interior_faces) + nb == 4 * m.n_elements
    seen = {(int(e), int(f)) for t in m.boundary_faces.values() for e, f in t}
    assert len(seen) == nb


def _on_segment(X, a, b):
    a, b = np.asarray(a, float), np.asarray(b, float)
    d = b - a
    t = ((X - a) @ d) / (d @ d)
    return np.abs(np.cross(X - a, d)) / np.linalg.norm(d), t


def test_plate_tags_and_walls():
    m = make_mesh("plate", length=2.0, upstream=0.5, height=1.0, nx_plate=10, nx_upstream=4, ny=8, q=2)
    for tag, check in (("plate", lambda X: (np.abs(X[..., 1]) < 1e-15) & (X[..., 0] >= -1e-15)),
                       ("upstream", lambda X: (np.abs(X[..., 1]) < 1e-15) & (X[..., 0] <= 1e-15)),
                       ("inlet", lambda X: np.abs(X[..., 0] + 0.5) < 1e-15),
                       ("outlet", lambda X: np.abs(X[..., 0] - 2.0) < 1e-15),
                       ("top", lambda X: np.abs(X[..., 1] - 1.0) < 1e-15)):
        X, _ = face_points(m, m.boundary_faces[tag], np.linspace(-1, 1, 3))
        assert check(X).all(), tag
    assert len(m.boundary_faces["plate"]) == 10 and len(m.boundary_faces["upstream"]) == 4
    # leading-edge and wall clustering as asked
    xs = np.unique(np.round(m.vertices[:, 0], 12))
    assert np.isclose(xs[xs > 0].min(), 0.005) and np.isclose(-xs[xs < 0].max(), 0.005)
    ys = np.unique(np.round(m.vertices[:, 1], 12))
    assert np.isclose(ys[1], 0.001)


def test_blocks_bodies_tagged_on_their_walls():
    bodies = ((-1.0, 0.0, -0.5, 0.5), (2.0, 2.5, 0.2, 1.4))
    m = make_mesh("blocks", bodies=bodies, wall_spacing=0.1, max_spacing=2.0)
    area = (30.0 * 20.0) - 1.0 - 0.5 * 1.2
    assert abs(mesh_quality(m)["area"] - area) < 1e-10
    for k, (a, b, c, d) in enumerate(bodies):
        X, _ = face_points(m, m.boundary_faces[f"body{k}"], np.array([-1.0, 0.0, 1.0]))
        X = X.reshape(-1, 2)
        on_x = (np.abs(X[:, 0] - a) < 1e-12) | (np.abs(X[:, 0] - b) < 1e-12)
        on_y = (np.abs(X[:, 1] - c) < 1e-12) | (np.abs(X[:, 1] - d) < 1e-12)
        assert (on_x | on_y).all()
        perim = 2 * ((b - a) + (d - c))
        _, dX = face_points(m, m.boundary_faces[f"body{k}"], np.zeros(1))
        assert abs(2 * np.linalg.norm(dX, axis=-1).sum() - perim) < 1e-12  # straight faces: length = 2 |dX/dt|


def test_towers_angle_places_pair():
    m = make_mesh("towers", spacing=4.0, angle=90.0, wall_spacing=0.2, max_spacing=3.0)
    X0, _ = face_points(m, m.boundary_faces["body0"], np.zeros(1))
    X1, _ = face_points(m, m.boundary_faces["body1"], np.zeros(1))
    c0, c1 = X0.reshape(-1, 2).mean(axis=0), X1.reshape(-1, 2).mean(axis=0)
    assert np.allclose(c1 - c0, [0.0, 4.0], atol=1e-12)  # side by side across the wind
    with pytest.raises(ValueError, match="overlap"):
        make_mesh("towers", spacing=1.0, angle=0.0)


def test_make_mesh_errors():
    with pytest.raises(ValueError, match=r"unknown mesh kind 'cylindre' \(did you mean 'cylinder'\?\); valid kinds"):
        make_mesh("cylindre")
    with pytest.raises(ValueError, match=r"no parameter 'n_aroun' \(did you mean 'n_around'\?\)"):
        make_mesh("cylinder", n_aroun=3)
    with pytest.raises(ValueError, match="bodies"):
        make_mesh("blocks", bodies=((0.0, 1.0, 0.0, 1.0), (0.5, 2.0, 0.5, 2.0)))
    with pytest.raises(ValueError, match="le_spacing"):
        make_mesh("plate", le_spacing=0.5)
