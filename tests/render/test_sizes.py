"""Label stock sizes and sheet grids."""

from __future__ import annotations

import pytest

from prepbook.errors import InvalidInput
from prepbook.render import sizes


@pytest.mark.parametrize(("typed", "name"), [
    ("70x37mm", "70x37mm"), ("70 x 37 mm", "70x37mm"), ("70X37", "70x37mm"),
    ("4x2in", "4x2in"), ("4x2", "4x2in"), ("2.625x1in", "2.625x1in"), ("100.0x50mm", "100x50mm"),
])
def test_sizes_are_found_as_typed(typed: str, name: str) -> None:
    assert sizes.find_size(typed).name == name


def test_inch_and_metric_dimensions_are_converted_to_points() -> None:
    # 1 in = 25.4 mm = 72 pt (the PostScript point; ISO 80000-3 defines the inch as 25.4 mm).
    assert sizes.find_size("4x2in").width_pt == pytest.approx(288)
    assert sizes.find_size("100x50mm").width_pt == pytest.approx(100 / 25.4 * 72)


@pytest.mark.parametrize("typed", ["71x37mm", "big", "", "70x37cm", "0x0"])
def test_an_unknown_size_is_refused_naming_the_known_ones(typed: str) -> None:
    with pytest.raises(InvalidInput, match="70x37mm"):
        sizes.find_size(typed)


@pytest.mark.parametrize("sheet", list(sizes.SHEETS))
@pytest.mark.parametrize("size", list(sizes.SIZES))
def test_every_label_of_a_sheet_grid_lies_on_the_page_without_overlap(sheet: str,
                                                                      size: str) -> None:
    sh, sz = sizes.SHEETS[sheet], sizes.SIZES[size]
    g = sizes.grid(sh, sz)
    assert g.per_sheet == len(g.origins) >= 2
    boxes = [(x, y, x + sz.width_pt, y + sz.height_pt) for x, y in g.origins]
    for x0, y0, x1, y1 in boxes:
        assert x0 >= sh.margin_pt - 1e-6 and y0 >= sh.margin_pt - 1e-6
        assert x1 <= sh.width_pt - sh.margin_pt + 1e-6
        assert y1 <= sh.height_pt - sh.margin_pt + 1e-6
    for i, a in enumerate(boxes):
        for b in boxes[i + 1:]:
            assert a[2] <= b[0] + 1e-6 or b[2] <= a[0] + 1e-6 or a[3] <= b[1] + 1e-6 \
                or b[3] <= a[1] + 1e-6


def test_a4_grid_of_70x37mm_labels_inside_8mm_margins() -> None:
    g = sizes.grid(sizes.SHEETS["a4"], sizes.SIZES["70x37mm"])
    # With 8 mm margins and 2.5 mm gaps: floor((194 + 2.5) / 72.5) = 2 columns,
    # floor((281 + 2.5) / 39.5) = 7 rows (arithmetic by hand).
    assert (g.columns, g.rows) == (2, 7)
