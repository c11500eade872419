"""The public API is explicit: a sorted __all__ whose every name exists."""

import fitkit


def test_all_is_sorted_and_complete():
    assert fitkit.__all__ == sorted(fitkit.__all__)
    for name in fitkit.__all__:
        assert hasattr(fitkit, name), name
