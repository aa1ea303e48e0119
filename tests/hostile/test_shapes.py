"""Odd but readable geometry gives the copper it describes, never a silently different one."""
import numpy as np
import pytest
import shapely

from scanner.importers.gerber_copper import read_copper
from tests.hostile import corpus
from tests.hostile.corpus import mm


def read(tmp_path, body: list[str]):
    path = corpus.write_lines(tmp_path / "copper.gbr", corpus.HEADER + body + ["M02*"])
    return read_copper(path)


def test_self_intersecting_region_keeps_both_lobes(tmp_path):
    """A bow-tie outline crossing itself at (65, 5): two 10 mm x 5 mm triangles, 25 mm² each."""
    art = read(tmp_path, corpus.region([(60, 0), (70, 10), (70, 0), (60, 10), (60, 0)]))
    assert len(art.geometry) == 1 and shapely.is_valid(art.geometry[0])
    assert shapely.area(art.geometry[0]) == pytest.approx(50.0)
    assert shapely.contains_xy(art.geometry[0], [61, 69], [5, 5]).all()  # inside each lobe
    assert not shapely.contains_xy(art.geometry[0], 65, 8)  # above the crossing, between the lobes


def test_zero_length_draw_is_a_pad_not_a_segment(tmp_path):
    art = read(tmp_path, ["D11*", f"X{mm(5)}Y{mm(5)}D02*", f"X{mm(5)}Y{mm(5)}D01*"])
    assert len(art.x0) == 0
    assert len(art.geometry) == 1 and art.role[0] == "pad"
    assert shapely.area(art.geometry[0]) == pytest.approx(np.pi * 0.3 ** 2, rel=0.02)  # the 0.6 mm aperture


def test_zero_area_objects_are_counted_in_warnings(tmp_path):
    body = ["%ADD20C,0*%", "D20*", f"X{mm(1)}Y{mm(1)}D03*"] + corpus.region([(0, 0), (5, 0), (0, 0)])
    art = read(tmp_path, body)
    assert len(art.geometry) == 0
    summary = art.log.summary()
    assert "flash of aperture D20 with no area ignored" in summary and "region with no area ignored" in summary
