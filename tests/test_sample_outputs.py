"""Every output of every sample job is byte-identical to the recorded digests.

A change that means to alter an output refreshes them with
``python tests/sample_outputs.py --update`` and says why in its commit.
"""

from __future__ import annotations

from .sample_outputs import compute_digests, recorded


def test_sample_outputs_unchanged(tmp_path):
    now = compute_digests(tmp_path)
    old = recorded()
    changed = sorted(k for k in old.keys() | now.keys() if old.get(k) != now.get(k))
    assert not changed, f"outputs changed: {changed}"
