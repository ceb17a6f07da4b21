"""Compact letter display of pairwise decisions.

Groups that share a letter are not significantly different; groups with no
letter in common are. The letters follow the means: the letter a goes to the
groups with the highest mean, b to the next set, and so on.

Method: Piepho's (2004) insert-and-absorb algorithm, followed by his sweep.
Start with one letter shared by all groups. For each significant pair, every
letter held by both groups is split into two, one without each group
(insert); a letter whose groups are a subset of another letter's is dropped
(absorb). The sweep then removes a group from a letter when every pair it
forms there is also covered by another letter and the group keeps a letter
elsewhere. The display is always exact (it encodes every decision); it is not
guaranteed to use the fewest letters, which is a hard combinatorial problem
in general. Letter sets are held as bit masks (bit g: group g).

Reference
---------
Piepho, H.-P. (2004). An algorithm for a letter-based representation of
all-pairwise comparisons. Journal of Computational and Graphical Statistics
13, 456-466.
"""

from __future__ import annotations

import string
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from numba import njit

SYMBOLS = string.ascii_lowercase + string.ascii_uppercase


@dataclass(frozen=True)
class LetterDisplay:
    letters: dict[str, str]
    note: str | None


def _members(mask: int) -> list[int]:
    return [g for g in range(mask.bit_length()) if mask >> g & 1]


@njit(cache=True)
def _is_subset(a, b):
    return a & b == a


@njit(cache=True)
def _insert_absorb(different):
    """Insert-and-absorb then sweep on bit masks (k <= 62), compiled."""
    k = different.shape[0]
    columns = np.empty(4096, dtype=np.int64)
    n = 1
    columns[0] = (np.int64(1) << k) - 1
    scratch = np.empty(4096, dtype=np.int64)
    for i in range(k):
        for j in range(i + 1, k):
            if not different[i, j]:
                continue
            both = (np.int64(1) << i) | (np.int64(1) << j)
            kept = 0
            for c in range(n):
                if columns[c] & both != both:
                    scratch[kept] = columns[c]
                    kept += 1
            m = kept
            for c in range(n):
                if columns[c] & both == both:
                    for drop in (i, j):
                        candidate = columns[c] & ~(np.int64(1) << drop)
                        # Only a split column can be absorbed: kept columns are
                        # not subsets of each other, nor of a split one.
                        absorbed = False
                        for o in range(m):
                            if _is_subset(candidate, scratch[o]):
                                absorbed = True
                                break
                        if not absorbed:
                            # a later split column may contain an earlier one
                            w = kept
                            for o in range(kept, m):
                                if not _is_subset(scratch[o], candidate):
                                    scratch[w] = scratch[o]
                                    w += 1
                            m = w
                            if m >= scratch.size:
                                return columns[:0]
                            scratch[m] = candidate
                            m += 1
            columns[:m] = scratch[:m]
            n = m
    # Sweep (Piepho 2004): drop a group from a letter when every pair it forms
    # there is covered by another letter and it keeps a letter elsewhere.
    for c in range(n):
        for g in range(k):
            bit = np.int64(1) << g
            if columns[c] & bit == 0:
                continue
            partners = columns[c] & ~bit
            covered = np.int64(0)
            elsewhere = False
            for o in range(n):
                if o != c and columns[o] & bit:
                    elsewhere = True
                    covered |= columns[o] & partners
            if elsewhere and covered == partners:
                columns[c] = partners
    out = np.empty(n, dtype=np.int64)
    count = 0
    for c in range(n):
        if columns[c] == 0:
            continue
        absorbed = False
        for o in range(n):
            if o != c and columns[o] != columns[c] and _is_subset(columns[c], columns[o]):
                absorbed = True
                break
            if o < c and columns[o] == columns[c]:
                absorbed = True
                break
        if not absorbed:
            out[count] = columns[c]
            count += 1
    return out[:count]


def _python_insert_absorb(different: np.ndarray) -> list[int]:
    """The same algorithm on Python integers, for more than 62 groups."""
    k = different.shape[0]
    rows = different.tolist()
    columns = [(1 << k) - 1]
    for i, j in [(a, b) for a in range(k) for b in range(a + 1, k) if rows[a][b]]:
        both = (1 << i) | (1 << j)
        kept = [c for c in columns if c & both != both]
        split = [c & ~(1 << i) for c in columns if c & both == both]
        split += [c & ~(1 << j) for c in columns if c & both == both]
        fresh = []
        for c in dict.fromkeys(split):
            if not any(c & o == c for o in kept) and not any(c != o and c & o == c for o in split):
                fresh.append(c)
        columns = kept + fresh
    for n in range(len(columns)):
        for g in _members(columns[n]):
            bit = 1 << g
            elsewhere = [c for m, c in enumerate(columns) if m != n and c & bit]
            partners = columns[n] & ~bit
            covered = 0
            for c in elsewhere:
                covered |= c & partners
            if elsewhere and covered == partners:
                columns[n] = partners
    unique = list(dict.fromkeys(c for c in columns if c))
    return [c for c in unique if not any(c != o and c & o == c for o in unique)]


def letter_sets(different: np.ndarray, order: Sequence[int]) -> list[list[int]]:
    """The groups sharing each letter (as lists of group indices in ``order``),
    letters ordered along ``order``."""
    different = np.ascontiguousarray(different, dtype=np.bool_)
    if different.shape[0] <= 62:
        masks = [int(c) for c in _insert_absorb(different)]
    else:
        masks = _python_insert_absorb(different)
    sets = [[g for g in order if mask >> g & 1] for mask in masks]
    rank = {g: r for r, g in enumerate(order)}
    return sorted(sets, key=lambda members: [rank[g] for g in members])


def compact_letter_display(labels: Sequence[str], means: np.ndarray, different: np.ndarray) -> LetterDisplay:
    """Letters for each label from a symmetric matrix of pairwise decisions."""
    order = [int(g) for g in np.argsort(-np.asarray(means), kind="stable")]
    sets = letter_sets(different, order)
    if len(sets) > len(SYMBOLS):
        return LetterDisplay(
            {label: "" for label in labels},
            f"the decisions need {len(sets)} letters, more than the {len(SYMBOLS)} available; "
            "read the pairwise rows instead",
        )
    rank = {g: r for r, g in enumerate(order)}
    letters = [""] * len(labels)
    contiguous = True
    for symbol, members in zip(SYMBOLS, sets, strict=False):
        for g in members:
            letters[g] += symbol
        contiguous &= rank[members[-1]] - rank[members[0]] + 1 == len(members)
    note = None if contiguous else (
        "some letters are shared by groups that are not neighbours in the order of the means: "
        "the decisions are not a simple ranking, so read the letters group by group")
    return LetterDisplay(dict(zip(labels, letters, strict=True)), note)
