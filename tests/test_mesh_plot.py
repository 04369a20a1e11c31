"""tools.meshplot draws a PNG."""
import pytest

from meshing import cylinder_mesh

pytest.importorskip("matplotlib")


def test_plot_writes_png(tmp_path):
    from tools.meshplot import plot_mesh

    p = str(tmp_path / "m.png")
    plot_mesh(cylinder_mesh(n_radial=3, n_around=12, q=2), p, zoom=(-1, 1, -1, 1))
    with open(p, "rb") as fh:
        assert fh.read(8) == b"\x89PNG\r\n\x1a\n"
    with pytest.raises(ValueError, match="zoom"):
        plot_mesh(cylinder_mesh(n_radial=3, n_around=12, q=2), p, zoom=(1, 0, 0, 1))
