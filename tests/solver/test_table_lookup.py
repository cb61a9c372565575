"""A table's look-ups kept between calls (server/solver/curves.py, issue 12): the answers are
those of a fresh look-up, whatever is asked in between."""

import numpy as np

from server.solver.curves import TabulatedCurve


def _table():
    V = np.linspace(0.0, 2.0, 41)
    return TabulatedCurve(V, np.full_like(V, 5e5), 1.0 / (100.0 + 50.0 * V + 7.0 * V * V))


def test_scalar_look_ups_in_any_order_are_those_of_a_fresh_table():
    table = _table()
    asks = [0.3, 0.3, 1.7, 0.3, 2.5, 0.0, 1.7, -0.1, 0.95, 0.95]
    for v in asks:
        fresh = _table()
        for name in ("time", "rate", "pressure_at"):
            assert getattr(table, name)(v) == getattr(fresh, name)(v), (name, v)


def test_a_read_only_array_s_segments_are_kept_and_a_writeable_one_s_never():
    table = _table()
    V = np.linspace(0.0, 2.0, 9)
    V.flags.writeable = False
    first = table.time(V)
    assert table._last_array[0] is V
    np.testing.assert_array_equal(table.rate(V), _table().rate(V))
    np.testing.assert_array_equal(first, _table().time(V))
    W = np.linspace(0.0, 2.0, 9)
    table.time(W)
    W[:] = W[::-1]  # changed in place: a kept look-up would now be wrong
    np.testing.assert_array_equal(table.time(W), _table().time(W))
    assert table._last_array[0] is V  # a writeable array is never kept
