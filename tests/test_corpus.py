"""Recall and precision of the whole catalog on the project's labelled corpus (tests/corpus/)."""
from __future__ import annotations

from corpus_labels import score


def test_corpus_recall_and_precision():
    s = score()
    print("\n" + s.table())
    if s.misses:
        print("missed:\n  " + "\n  ".join(s.misses))
    if s.false_alarms:
        print("false alarms:\n  " + "\n  ".join(s.false_alarms))
    assert s.recall() >= 0.9, s.table()
    assert s.precision() >= 0.9, s.table()
