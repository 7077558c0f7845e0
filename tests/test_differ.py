"""The case differ (record/differ.py) on what issue-16 edits change (invented cases)."""

from __future__ import annotations

from beliefledger.record.differ import diff_cases
from test_uncertain import kiln


def test_a_changed_uncertain_observation_is_reported_with_its_weights():
    old = kiln()
    new = old.copy()
    new.observe("flame colour", likelihood={"blue": 0.2, "yellow": 0.7, "orange": 0.1})
    changes = [c for c in diff_cases(old, new) if c.where == "observed state of 'flame colour'"]
    assert len(changes) == 1
    assert changes[0].old == "pending"
    assert changes[0].new == "uncertain: likelihood weights (blue 0.2, yellow 0.7, orange 0.1)"
    newer = new.copy()
    newer.observe("flame colour", likelihood={"blue": 0.1, "yellow": 0.8, "orange": 0.1})
    (c,) = [c for c in diff_cases(new, newer) if c.where == "observed state of 'flame colour'"]
    assert "yellow 0.8" in c.new and "yellow 0.7" in c.old
    assert not [c for c in diff_cases(new, new.copy()) if "flame colour" in c.where]
