"""Tests for ledger.chain.merkle against published RFC 6962 vectors and the RFC's own recursion.

External sources used below:
  [constants]  transparency-dev/merkle, testonly/constants.go (leaf inputs, every complete
               subtree hash and every root of the 8-leaf tree, the frontier per size).
  [verify]     transparency-dev/merkle, proof/verify_test.go (inclusion and consistency
               proofs with their hashes, and the list of corruptions a verifier must reject).
  [plans]      transparency-dev/merkle, proof/proof_test.go (which stored nodes make up
               each proof element, for trees up to size 95).
  [RFC 6962]   RFC 6962 section 2.1 (MTH), 2.1.1 (PATH), 2.1.2 (PROOF/SUBPROOF): the
               reference_* functions transcribe those definitions, recursion and all, to
               cross-check the stored-node algorithm on random sizes.
"""

from __future__ import annotations

import hashlib
import random

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from ledger.chain.merkle import (
    EMPTY_ROOT,
    MissingNodeError,
    ProofError,
    assemble_proof,
    check_consistency,
    check_inclusion,
    consistency_proof,
    consistency_proof_plan,
    fold_subtree_hashes,
    frontier_append,
    inclusion_proof,
    inclusion_proof_plan,
    leaf_hash,
    node_hash,
    plan_node_ids,
    root_from_frontier,
    root_from_inclusion_proof,
    root_hash,
    subtrees_of_range,
    verify_consistency,
    verify_inclusion,
)

# --- reference implementation: RFC 6962 section 2.1, 2.1.1, 2.1.2, written as in the RFC ---


def _reference_split(n: int) -> int:
    # "k be the largest power of two smaller than n (i.e., k < n <= 2k)" -- RFC 6962 2.1
    k = 1
    while k * 2 < n:
        k *= 2
    return k


def reference_mth(entries: list[bytes]) -> bytes:
    n = len(entries)
    if n == 0:
        return hashlib.sha256(b"").digest()
    if n == 1:
        return hashlib.sha256(b"\x00" + entries[0]).digest()
    k = _reference_split(n)
    return hashlib.sha256(b"\x01" + reference_mth(entries[:k]) + reference_mth(entries[k:])).digest()


def reference_path(m: int, entries: list[bytes]) -> list[bytes]:
    n = len(entries)
    if n == 1:
        return []
    k = _reference_split(n)
    if m < k:
        return reference_path(m, entries[:k]) + [reference_mth(entries[k:])]
    return reference_path(m - k, entries[k:]) + [reference_mth(entries[:k])]


def reference_subproof(m: int, entries: list[bytes], whole: bool) -> list[bytes]:
    n = len(entries)
    if m == n:
        return [] if whole else [reference_mth(entries)]
    k = _reference_split(n)
    if m <= k:
        return reference_subproof(m, entries[:k], whole) + [reference_mth(entries[k:])]
    return reference_subproof(m - k, entries[k:], False) + [reference_mth(entries[:k])]


def reference_proof(m: int, entries: list[bytes]) -> list[bytes]:
    return reference_subproof(m, entries, True)


# --- an in-memory node store built only through frontier_append -------------------------


class NodeStore:
    """What the ledger's node table holds, kept in a dict; records every fetch."""

    def __init__(self, entries: list[bytes]):
        self.nodes: dict[tuple[int, int], bytes] = {}
        self.frontiers: list[list[bytes]] = [[]]
        self.fetches: list[set[tuple[int, int]]] = []
        frontier: list[bytes] = []
        for size, entry in enumerate(entries):
            frontier, completed = frontier_append(frontier=frontier, size=size, leaf=leaf_hash(entry))
            for level, index, digest in completed:
                assert (level, index) not in self.nodes, "each node must be completed exactly once"
                self.nodes[(level, index)] = digest
            self.frontiers.append(frontier)

    def fetch(self, node_ids: set[tuple[int, int]]) -> dict[tuple[int, int], bytes]:
        self.fetches.append(set(node_ids))
        return {node_id: self.nodes[node_id] for node_id in node_ids}


def complete_subtree_ids(size: int) -> set[tuple[int, int]]:
    ids = set()
    level = 0
    while (1 << level) <= size:
        ids.update((level, index) for index in range(size >> level))
        level += 1
    return ids


# --- published vectors: transparency-dev/merkle testonly/constants.go ---------------------

LEAF_INPUTS = [
    bytes.fromhex(h)
    for h in [
        "",
        "00",
        "10",
        "2021",
        "3031",
        "40414243",
        "5051525354555657",
        "606162636465666768696a6b6c6d6e6f",
    ]
]

# NodeHashes(): [level][index] for every complete subtree of the 8-leaf tree. [constants]
NODE_HASHES = [
    [
        "6e340b9cffb37a989ca544e6bb780a2c78901d3fb33738768511a30617afa01d",
        "96a296d224f285c67bee93c30f8a309157f0daa35dc5b87e410b78630a09cfc7",
        "0298d122906dcfc10892cb53a73992fc5b9f493ea4c9badb27b791b4127a7fe7",
        "07506a85fd9dd2f120eb694f86011e5bb4662e5c415a62917033d4a9624487e7",
        "bc1a0643b12e4d2d7c77918f44e0f4f79a838b6cf9ec5b5c283e1f4d88599e6b",
        "4271a26be0d8a84f0bd54c8c302e7cb3a3b5d1fa6780a40bcce2873477dab658",
        "b08693ec2e721597130641e8211e7eedccb4c26413963eee6c1e2ed16ffb1a5f",
        "46f6ffadd3d06a09ff3c5860d2755c8b9819db7df44251788c7d8e3180de8eb1",
    ],
    [
        "fac54203e7cc696cf0dfcb42c92a1d9dbaf70ad9e621f4bd8d98662f00e3c125",
        "5f083f0a1a33ca076a95279832580db3e0ef4584bdff1f54c8a360f50de3031e",
        "0ebc5d3437fbe2db158b9f126a1d118e308181031d0a949f8dededebc558ef6a",
        "ca854ea128ed050b41b35ffc1b87b8eb2bde461e9e3b5596ece6b9d5975a0ae0",
    ],
    [
        "d37ee418976dd95753c1c73862b9398fa2a2cf9b4ff0fdfe8b30cd95209614b7",
        "6b47aaf29ee3c2af9af889bc1fb9254dabd31177f16232dd6aab035ca39bf6e4",
    ],
    ["5dc9da79a70659a9ad559cb701ded9a2ab9d823aad2f4960cfe370eff4604328"],
]
NODE = {(level, index): bytes.fromhex(h) for level, row in enumerate(NODE_HASHES) for index, h in enumerate(row)}

# RootHashes(): root for tree sizes 0..8. [constants]
ROOTS = [
    bytes.fromhex(h)
    for h in [
        "e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855",
        "6e340b9cffb37a989ca544e6bb780a2c78901d3fb33738768511a30617afa01d",
        "fac54203e7cc696cf0dfcb42c92a1d9dbaf70ad9e621f4bd8d98662f00e3c125",
        "aeb6bcfe274b70a14fb067a5e5578264db0fa9b51af5e0ba159158f329e06e77",
        "d37ee418976dd95753c1c73862b9398fa2a2cf9b4ff0fdfe8b30cd95209614b7",
        "4e3bbb1f7b478dcfe71fb631631519a3bca12c9aefca1612bfce4c13a86264d4",
        "76e67dadbcdf1e10e1b74ddc608abd2f98dfb16fbce75277b5232a127f2087ef",
        "ddb89be403809e325750d3d263cd78929c2942b7942a34b77e122c9594a74c8c",
        "5dc9da79a70659a9ad559cb701ded9a2ab9d823aad2f4960cfe370eff4604328",
    ]
]

# CompactTrees(): the frontier after each size, as node ids into NodeHashes. [constants]
FRONTIER_IDS = [
    [],
    [(0, 0)],
    [(1, 0)],
    [(1, 0), (0, 2)],
    [(2, 0)],
    [(2, 0), (0, 4)],
    [(2, 0), (1, 2)],
    [(2, 0), (1, 2), (0, 6)],
    [(3, 0)],
]


def _hashes(*hex_values: str) -> list[bytes]:
    return [bytes.fromhex(h) for h in hex_values]


# inclusionProofs, converted from the file's 1-based leaf number to our 0-based index. [verify]
INCLUSION_VECTORS = [
    (0, 1, []),
    (
        0,
        8,
        _hashes(
            "96a296d224f285c67bee93c30f8a309157f0daa35dc5b87e410b78630a09cfc7",
            "5f083f0a1a33ca076a95279832580db3e0ef4584bdff1f54c8a360f50de3031e",
            "6b47aaf29ee3c2af9af889bc1fb9254dabd31177f16232dd6aab035ca39bf6e4",
        ),
    ),
    (
        5,
        8,
        _hashes(
            "bc1a0643b12e4d2d7c77918f44e0f4f79a838b6cf9ec5b5c283e1f4d88599e6b",
            "ca854ea128ed050b41b35ffc1b87b8eb2bde461e9e3b5596ece6b9d5975a0ae0",
            "d37ee418976dd95753c1c73862b9398fa2a2cf9b4ff0fdfe8b30cd95209614b7",
        ),
    ),
    (2, 3, _hashes("fac54203e7cc696cf0dfcb42c92a1d9dbaf70ad9e621f4bd8d98662f00e3c125")),
    (
        1,
        5,
        _hashes(
            "6e340b9cffb37a989ca544e6bb780a2c78901d3fb33738768511a30617afa01d",
            "5f083f0a1a33ca076a95279832580db3e0ef4584bdff1f54c8a360f50de3031e",
            "bc1a0643b12e4d2d7c77918f44e0f4f79a838b6cf9ec5b5c283e1f4d88599e6b",
        ),
    ),
]

# consistencyProofs. [verify]
CONSISTENCY_VECTORS = [
    (1, 1, []),
    (
        1,
        8,
        _hashes(
            "96a296d224f285c67bee93c30f8a309157f0daa35dc5b87e410b78630a09cfc7",
            "5f083f0a1a33ca076a95279832580db3e0ef4584bdff1f54c8a360f50de3031e",
            "6b47aaf29ee3c2af9af889bc1fb9254dabd31177f16232dd6aab035ca39bf6e4",
        ),
    ),
    (
        6,
        8,
        _hashes(
            "0ebc5d3437fbe2db158b9f126a1d118e308181031d0a949f8dededebc558ef6a",
            "ca854ea128ed050b41b35ffc1b87b8eb2bde461e9e3b5596ece6b9d5975a0ae0",
            "d37ee418976dd95753c1c73862b9398fa2a2cf9b4ff0fdfe8b30cd95209614b7",
        ),
    ),
    (
        2,
        5,
        _hashes(
            "5f083f0a1a33ca076a95279832580db3e0ef4584bdff1f54c8a360f50de3031e",
            "bc1a0643b12e4d2d7c77918f44e0f4f79a838b6cf9ec5b5c283e1f4d88599e6b",
        ),
    ),
    (
        6,
        7,
        _hashes(
            "0ebc5d3437fbe2db158b9f126a1d118e308181031d0a949f8dededebc558ef6a",
            "b08693ec2e721597130641e8211e7eedccb4c26413963eee6c1e2ed16ffb1a5f",
            "d37ee418976dd95753c1c73862b9398fa2a2cf9b4ff0fdfe8b30cd95209614b7",
        ),
    ),
]

NONTRIVIAL_CONSISTENCY = [vector for vector in CONSISTENCY_VECTORS if vector[2]]

# sha256SomeHash: an arbitrary 32-byte value that is no hash of this tree. [verify]
SOME_HASH = bytes.fromhex("abacaba000000000000000000000000000000000000000000060061e00123456")


@pytest.fixture(scope="module")
def published_store() -> NodeStore:
    return NodeStore(LEAF_INPUTS)


def _ids(table) -> list[str]:
    return [f"{row[0]}-{row[1]}" for row in table]


# --- hashing, appending and roots ---------------------------------------------------------


def test_empty_root_and_leaf_hashes_match_published_values():
    assert EMPTY_ROOT == ROOTS[0]
    assert [leaf_hash(data) for data in LEAF_INPUTS] == [NODE[(0, index)] for index in range(8)]
    assert node_hash(left=NODE[(0, 0)], right=NODE[(0, 1)]) == NODE[(1, 0)]


def test_reference_recursion_reproduces_published_roots():
    # Validates the oracle itself before it is used on random sizes.
    assert [reference_mth(LEAF_INPUTS[:size]) for size in range(9)] == ROOTS


def test_appends_emit_every_published_subtree_once_and_track_each_root(published_store):
    assert published_store.nodes == NODE
    for size, frontier in enumerate(published_store.frontiers):
        assert frontier == [NODE[node_id] for node_id in FRONTIER_IDS[size]], size
        assert root_from_frontier(frontier) == ROOTS[size], size


def test_append_reports_leaf_first_then_each_completed_parent():
    frontier = [NODE[node_id] for node_id in FRONTIER_IDS[7]]
    new_frontier, completed = frontier_append(frontier=frontier, size=7, leaf=NODE[(0, 7)])
    assert completed == [
        (0, 7, NODE[(0, 7)]),
        (1, 3, NODE[(1, 3)]),
        (2, 1, NODE[(2, 1)]),
        (3, 0, NODE[(3, 0)]),
    ]
    assert new_frontier == [NODE[(3, 0)]]
    assert frontier == [NODE[node_id] for node_id in FRONTIER_IDS[7]], "input frontier must not change"


def test_append_rejects_a_frontier_that_does_not_fit_the_size():
    with pytest.raises(ValueError, match="frontier of 2 hashes .* but 1 were given"):
        frontier_append(frontier=[NODE[(1, 0)]], size=3, leaf=NODE[(0, 3)])
    with pytest.raises(ValueError, match="leaf must be a 32-byte SHA-256 hash; got 31 bytes"):
        frontier_append(frontier=[], size=0, leaf=bytes(31))
    with pytest.raises(ValueError, match="size must be an integer >= 0; got -1"):
        frontier_append(frontier=[], size=-1, leaf=bytes(32))


def test_root_hash_from_stored_nodes_matches_published_roots(published_store):
    for size, expected in enumerate(ROOTS):
        published_store.fetches.clear()
        assert root_hash(size=size, fetch=published_store.fetch) == expected
        assert len(published_store.fetches) == (1 if size else 0)


# --- ranges and folding ----------------------------------------------------------------------


def test_fold_of_each_valid_range_equals_the_rfc_hash_of_that_range():
    entries = [hashlib.sha256(str(i).encode()).digest() for i in range(64)]
    store = NodeStore(entries)
    for start in range(64):
        for end in range(start + 1, 65):
            width = end - start
            # An RFC 6962 tree node [a, b) starts at a multiple of the smallest 2**j >= b - a.
            is_rfc_node = start % (1 << (width - 1).bit_length()) == 0
            if start % (1 << (width.bit_length() - 1)):
                assert not is_rfc_node, (start, end)
                with pytest.raises(ValueError, match="not a Merkle tree node range"):
                    subtrees_of_range(start=start, end=end)
                continue
            pieces = subtrees_of_range(start=start, end=end)
            covered = [i for level, index in pieces for i in range(index << level, (index + 1) << level)]
            assert covered == list(range(start, end))
            folded = fold_subtree_hashes([store.nodes[piece] for piece in pieces])
            assert folded == reference_mth(entries[start:end]), (start, end)


def test_subtrees_of_a_range_from_published_examples():
    # [plans] size 95, index 81: the element MTH(D[88:95]) is nodes (2,22) (1,46) (0,94).
    assert subtrees_of_range(start=88, end=95) == [(2, 22), (1, 46), (0, 94)]
    with pytest.raises(ValueError, match=r"start must be a multiple of 2 .* split the range"):
        subtrees_of_range(start=1, end=4)
    with pytest.raises(ValueError, match="end must be an integer >= 4"):
        subtrees_of_range(start=3, end=3)


# --- proof plans against transparency-dev/merkle proof/proof_test.go -------------------------


def _plan_from_go_nodes(ids: list[tuple[int, int]], rehash: tuple[int, int] | None = None):
    """proof_test.go lists nodes flat; ids[begin:end] (lowest level first) fold into one element."""
    if rehash is None:
        return [[node_id] for node_id in ids]
    begin, end = rehash
    return [[n] for n in ids[:begin]] + [list(reversed(ids[begin:end]))] + [[n] for n in ids[end:]]


# TestInclusion table. [plans]
GO_INCLUSION_PLANS = [
    (1, 0, [], None),
    (2, 0, [(0, 1)], None),
    (2, 1, [(0, 0)], None),
    (3, 1, [(0, 0), (0, 2)], None),
    (7, 0, [(0, 1), (1, 1), (0, 6), (1, 2)], (2, 4)),
    (7, 1, [(0, 0), (1, 1), (0, 6), (1, 2)], (2, 4)),
    (7, 2, [(0, 3), (1, 0), (0, 6), (1, 2)], (2, 4)),
    (7, 3, [(0, 2), (1, 0), (0, 6), (1, 2)], (2, 4)),
    (7, 4, [(0, 5), (0, 6), (2, 0)], None),
    (7, 5, [(0, 4), (0, 6), (2, 0)], None),
    (7, 6, [(1, 2), (2, 0)], None),
    (4, 2, [(0, 3), (1, 0)], None),
    (5, 3, [(0, 2), (1, 0), (0, 4)], None),
    (6, 3, [(0, 2), (1, 0), (1, 2)], None),
    (6, 4, [(0, 5), (2, 0)], None),
    (15, 10, [(0, 11), (1, 4), (0, 14), (1, 6), (3, 0)], (2, 4)),
    (31, 24, [(0, 25), (1, 13), (0, 30), (1, 14), (3, 2), (4, 0)], (2, 4)),
    (95, 81, [(0, 80), (1, 41), (2, 21), (0, 94), (1, 46), (2, 22), (4, 4), (6, 0)], (3, 6)),
]

# TestConsistency table. [plans]
GO_CONSISTENCY_PLANS = [
    (1, 2, [(0, 1)], None),
    (1, 4, [(0, 1), (1, 1)], None),
    (1, 6, [(0, 1), (1, 1), (1, 2)], None),
    (2, 3, [(0, 2)], None),
    (2, 8, [(1, 1), (2, 1)], None),
    (3, 7, [(0, 2), (0, 3), (1, 0), (0, 6), (1, 2)], (3, 5)),
    (4, 7, [(0, 6), (1, 2)], (0, 2)),
    (5, 7, [(0, 4), (0, 5), (0, 6), (2, 0)], None),
    (6, 7, [(1, 2), (0, 6), (2, 0)], None),
    (7, 8, [(0, 6), (0, 7), (1, 2), (2, 0)], None),
    (1, 1, [], None),
    (2, 2, [], None),
    (3, 3, [], None),
    (4, 4, [], None),
    (5, 5, [], None),
    (7, 7, [], None),
    (8, 8, [], None),
    (2, 4, [(1, 1)], None),
    (3, 5, [(0, 2), (0, 3), (1, 0), (0, 4)], None),
    (3, 6, [(0, 2), (0, 3), (1, 0), (1, 2)], None),
    (4, 6, [(1, 2)], None),
    (1, 7, [(0, 1), (1, 1), (0, 6), (1, 2)], (2, 4)),
    (10, 15, [(1, 4), (1, 5), (0, 14), (1, 6), (3, 0)], (2, 4)),
    (24, 31, [(3, 2), (0, 30), (1, 14), (2, 6), (4, 0)], (1, 4)),
    (
        81,
        95,
        [(0, 80), (0, 81), (1, 41), (2, 21), (0, 94), (1, 46), (2, 22), (4, 4), (6, 0)],
        (4, 7),
    ),
]


@pytest.mark.parametrize(("size", "index", "ids", "rehash"), GO_INCLUSION_PLANS, ids=_ids(GO_INCLUSION_PLANS))
def test_inclusion_plan_matches_published_node_lists(size, index, ids, rehash):
    assert inclusion_proof_plan(index=index, size=size) == _plan_from_go_nodes(ids, rehash)


@pytest.mark.parametrize(
    ("old_size", "new_size", "ids", "rehash"), GO_CONSISTENCY_PLANS, ids=_ids(GO_CONSISTENCY_PLANS)
)
def test_consistency_plan_matches_published_node_lists(old_size, new_size, ids, rehash):
    assert consistency_proof_plan(old_size=old_size, new_size=new_size) == _plan_from_go_nodes(ids, rehash)


@pytest.mark.parametrize(("size", "index"), [(0, 0), (0, 1), (1, 2), (0, 3), (7, 8), (7, -1)])
def test_inclusion_plan_rejects_index_outside_tree(size, index):
    # The error rows of proof_test.go TestInclusion, plus a negative index. [plans]
    with pytest.raises(ValueError, match="must be"):
        inclusion_proof_plan(index=index, size=size)


@pytest.mark.parametrize(("old_size", "new_size"), [(5, 0), (9, 8)])
def test_consistency_plan_rejects_shrinking_log(old_size, new_size):
    with pytest.raises(ValueError, match="old_size must not exceed new_size"):
        consistency_proof_plan(old_size=old_size, new_size=new_size)


def test_assemble_names_the_missing_nodes():
    plan = inclusion_proof_plan(index=0, size=7)
    with pytest.raises(MissingNodeError, match=r"\(1, 2\).*fetch every id in plan_node_ids"):
        assemble_proof(plan=plan, nodes={(0, 1): NODE[(0, 1)], (1, 1): NODE[(1, 1)]})


# --- published proofs: generation and verification -----------------------------------------


@pytest.mark.parametrize(("index", "size", "expected"), INCLUSION_VECTORS, ids=_ids(INCLUSION_VECTORS))
def test_inclusion_proof_from_stored_nodes_matches_published(published_store, index, size, expected):
    published_store.fetches.clear()
    proof = inclusion_proof(index=index, size=size, fetch=published_store.fetch)
    assert proof == expected
    assert len(published_store.fetches) == (1 if expected else 0)
    leaf = leaf_hash(LEAF_INPUTS[index])
    assert root_from_inclusion_proof(leaf_hash=leaf, index=index, size=size, proof=proof) == ROOTS[size]
    assert verify_inclusion(leaf_hash=leaf, index=index, size=size, proof=proof, root=ROOTS[size])


@pytest.mark.parametrize(("old_size", "new_size", "expected"), CONSISTENCY_VECTORS, ids=_ids(CONSISTENCY_VECTORS))
def test_consistency_proof_from_stored_nodes_matches_published(published_store, old_size, new_size, expected):
    proof = consistency_proof(old_size=old_size, new_size=new_size, fetch=published_store.fetch)
    assert proof == expected
    assert verify_consistency(
        old_size=old_size,
        new_size=new_size,
        old_root=ROOTS[old_size],
        new_root=ROOTS[new_size],
        proof=proof,
    )


def _flip(data: bytes, *, byte: int, mask: int) -> bytes:
    changed = bytearray(data)
    changed[byte] ^= mask
    return bytes(changed)


def corrupted_inclusion_probes(index, size, proof, root, leaf):
    """corruptInclusionProof() of [verify], case for case (Go's uint64 0 - 1 wraps; ours is -1)."""
    probes = {
        "leafIndex - 1": (index - 1, size, root, leaf, proof),
        "leafIndex + 1": (index + 1, size, root, leaf, proof),
        "leafIndex ^ 2": (index ^ 2, size, root, leaf, proof),
        "treeSize * 2": (index, size * 2, root, leaf, proof),
        "treeSize / 2": (index, size // 2, root, leaf, proof),
        "wrong leaf": (index, size, root, b"WrongLeaf", proof),
        "empty root": (index, size, EMPTY_ROOT, leaf, proof),
        "random root": (index, size, SOME_HASH, leaf, proof),
        "trailing garbage": (index, size, root, leaf, [*proof, b""]),
        "trailing root": (index, size, root, leaf, [*proof, root]),
        "preceding garbage": (index, size, root, leaf, [b"", *proof]),
        "preceding root": (index, size, root, leaf, [root, *proof]),
    }
    for position in range(len(proof)):
        wrong = list(proof)
        wrong[position] = _flip(wrong[position], byte=0, mask=8)
        probes[f"modified proof[{position}] bit 3"] = (index, size, root, leaf, wrong)
    if proof:
        probes["removed component"] = (index, size, root, leaf, proof[:-1])
    if len(proof) > 1:
        probes["inserted component"] = (index, size, root, leaf, [proof[0], SOME_HASH, *proof[1:]])
    return probes


def corrupted_consistency_probes(old_size, new_size, old_root, new_root, proof):
    """corruptConsistencyProof() of [verify], case for case."""
    probes = {
        "size1 - 1": (old_size - 1, new_size, old_root, new_root, proof),
        "size1 + 1": (old_size + 1, new_size, old_root, new_root, proof),
        "size1 ^ 2": (old_size ^ 2, new_size, old_root, new_root, proof),
        "size2 * 2": (old_size, new_size * 2, old_root, new_root, proof),
        "size2 / 2": (old_size, new_size // 2, old_root, new_root, proof),
        "wrong root1": (old_size, new_size, b"WrongRoot", new_root, proof),
        "wrong root2": (old_size, new_size, old_root, b"WrongRoot", proof),
        "swapped roots": (old_size, new_size, new_root, old_root, proof),
        "empty proof": (old_size, new_size, old_root, new_root, []),
        "trailing garbage": (old_size, new_size, old_root, new_root, [*proof, b""]),
        "trailing root1": (old_size, new_size, old_root, new_root, [*proof, old_root]),
        "trailing root2": (old_size, new_size, old_root, new_root, [*proof, new_root]),
        "preceding garbage": (old_size, new_size, old_root, new_root, [b"", *proof]),
        "preceding root1": (old_size, new_size, old_root, new_root, [old_root, *proof]),
        "preceding root2": (old_size, new_size, old_root, new_root, [new_root, *proof]),
        "preceding proof[0]": (old_size, new_size, old_root, new_root, [proof[0], *proof]),
        "truncated proof": (old_size, new_size, old_root, new_root, proof[:-1]),
    }
    for position in range(len(proof)):
        wrong = list(proof)
        wrong[position] = _flip(wrong[position], byte=0, mask=16)
        probes[f"modified proof[{position}] bit 4"] = (
            old_size,
            new_size,
            old_root,
            new_root,
            wrong,
        )
    return probes


@pytest.mark.parametrize(("index", "size", "proof"), INCLUSION_VECTORS, ids=_ids(INCLUSION_VECTORS))
def test_every_published_inclusion_corruption_is_rejected(index, size, proof):
    leaf = leaf_hash(LEAF_INPUTS[index])
    probes = corrupted_inclusion_probes(index, size, proof, ROOTS[size], leaf)
    accepted = [
        name
        for name, (p_index, p_size, p_root, p_leaf, p_proof) in probes.items()
        if verify_inclusion(leaf_hash=p_leaf, index=p_index, size=p_size, proof=p_proof, root=p_root)
    ]
    assert accepted == []
    assert len(probes) >= 12


@pytest.mark.parametrize(("old_size", "new_size", "proof"), NONTRIVIAL_CONSISTENCY, ids=_ids(NONTRIVIAL_CONSISTENCY))
def test_every_published_consistency_corruption_is_rejected(old_size, new_size, proof):
    # verify_test.go only corrupts non-empty proofs (its comment: "for simplicity").
    probes = corrupted_consistency_probes(old_size, new_size, ROOTS[old_size], ROOTS[new_size], proof)
    accepted = [
        name
        for name, (p_old, p_new, p_old_root, p_new_root, p_proof) in probes.items()
        if verify_consistency(old_size=p_old, new_size=p_new, old_root=p_old_root, new_root=p_new_root, proof=p_proof)
    ]
    assert accepted == []


@pytest.mark.parametrize(("index", "size", "proof"), INCLUSION_VECTORS, ids=_ids(INCLUSION_VECTORS))
def test_flipping_any_bit_of_a_published_inclusion_proof_or_root_is_rejected(index, size, proof):
    leaf = leaf_hash(LEAF_INPUTS[index])
    for position in range(len(proof)):
        for bit in range(256):
            wrong = list(proof)
            wrong[position] = _flip(proof[position], byte=bit // 8, mask=1 << (bit % 8))
            assert not verify_inclusion(leaf_hash=leaf, index=index, size=size, proof=wrong, root=ROOTS[size])
    for bit in range(256):
        wrong_root = _flip(ROOTS[size], byte=bit // 8, mask=1 << (bit % 8))
        assert not verify_inclusion(leaf_hash=leaf, index=index, size=size, proof=proof, root=wrong_root)


def test_single_entry_tree_checks_leaf_against_root():
    # TestVerifyInclusionSingleEntry: root and leaf hash coincide, the proof is empty. [verify]
    digest = leaf_hash(b"data")
    assert verify_inclusion(leaf_hash=digest, index=0, size=1, proof=[], root=digest)
    assert not verify_inclusion(leaf_hash=b"", index=0, size=1, proof=[], root=digest)
    assert not verify_inclusion(leaf_hash=digest, index=0, size=1, proof=[], root=b"")
    assert not verify_inclusion(leaf_hash=b"", index=0, size=1, proof=[], root=b"")


@pytest.mark.parametrize(("index", "size"), [(0, 0), (0, 1), (1, 0), (2, 1)])
def test_inclusion_with_empty_proof_and_mismatched_hashes_is_rejected(index, size):
    # TestVerifyInclusion probes. [verify]
    assert not verify_inclusion(leaf_hash=SOME_HASH, index=index, size=size, proof=[], root=b"")
    assert not verify_inclusion(leaf_hash=b"", index=index, size=size, proof=[], root=EMPTY_ROOT)
    assert not verify_inclusion(leaf_hash=SOME_HASH, index=index, size=size, proof=[], root=EMPTY_ROOT)


_ROOT_A, _ROOT_B = leaf_hash(b"root a"), leaf_hash(b"root b")


@pytest.mark.parametrize(
    ("old_size", "new_size", "old_root", "new_root", "proof", "accepted"),
    [
        # TestVerifyConsistency table. [verify] Go passes 12-byte "don't care" roots where the
        # sizes make roots irrelevant; we require real 32-byte hashes and, for size 0, the
        # empty-tree root, so those rows use real hashes and keep Go's expected outcome.
        (0, 0, _ROOT_A, _ROOT_B, [], False),
        (1, 1, _ROOT_A, _ROOT_B, [], False),
        (0, 0, EMPTY_ROOT, EMPTY_ROOT, [], True),
        (0, 1, EMPTY_ROOT, _ROOT_B, [], True),
        (1, 1, _ROOT_B, _ROOT_B, [], True),
        (1, 0, _ROOT_A, _ROOT_B, [], False),
        (2, 1, _ROOT_A, _ROOT_B, [], False),
        (1, 2, _ROOT_A, _ROOT_B, [], False),
        (0, 0, EMPTY_ROOT, _ROOT_B, [], False),
        (1, 1, EMPTY_ROOT, _ROOT_B, [], False),
        (0, 0, EMPTY_ROOT, EMPTY_ROOT, [EMPTY_ROOT], False),
        (0, 1, EMPTY_ROOT, EMPTY_ROOT, [EMPTY_ROOT], False),
        (1, 1, EMPTY_ROOT, EMPTY_ROOT, [EMPTY_ROOT], False),
        # Our stricter reading: a size-0 tree has exactly one root (RFC 6962 section 2.1).
        (0, 1, _ROOT_A, _ROOT_B, [], False),
    ],
)
def test_consistency_edge_sizes(old_size, new_size, old_root, new_root, proof, accepted):
    assert (
        verify_consistency(old_size=old_size, new_size=new_size, old_root=old_root, new_root=new_root, proof=proof)
        is accepted
    )


def test_check_functions_say_why_a_proof_fails():
    proof = INCLUSION_VECTORS[2][2]
    leaf = leaf_hash(LEAF_INPUTS[5])
    with pytest.raises(ProofError, match="fewer hashes"):
        check_inclusion(leaf_hash=leaf, index=5, size=8, proof=proof[:-1], root=ROOTS[8])
    with pytest.raises(ProofError, match="more hashes"):
        check_inclusion(leaf_hash=leaf, index=5, size=8, proof=[*proof, SOME_HASH], root=ROOTS[8])
    with pytest.raises(ProofError, match="different root"):
        check_inclusion(leaf_hash=leaf, index=5, size=8, proof=proof, root=ROOTS[7])
    with pytest.raises(ProofError, match=r"proof\[0\] must be a 32-byte SHA-256 hash; got 0 bytes"):
        check_inclusion(leaf_hash=leaf, index=5, size=8, proof=[b""], root=ROOTS[8])
    with pytest.raises(ProofError, match="a log never shrinks"):
        check_consistency(old_size=8, new_size=7, old_root=ROOTS[8], new_root=ROOTS[7], proof=[])
    with pytest.raises(ProofError, match="the log forked"):
        check_consistency(old_size=8, new_size=8, old_root=ROOTS[8], new_root=ROOTS[7], proof=[])
    with pytest.raises(ProofError, match="root given for size 8"):
        check_consistency(
            old_size=6,
            new_size=8,
            old_root=ROOTS[6],
            new_root=ROOTS[7],
            proof=CONSISTENCY_VECTORS[2][2],
        )


# --- property tests: stored-node algorithm against the RFC recursion -----------------------

MAX_SIZE = 3000


@pytest.fixture(scope="module")
def big_store() -> tuple[list[bytes], NodeStore]:
    # Leaf inputs are 32-byte entry hashes, as in the ledger.
    entries = [hashlib.sha256(f"entry {i}".encode()).digest() for i in range(MAX_SIZE)]
    return entries, NodeStore(entries)


def test_every_stored_node_is_the_rfc_hash_of_its_range(big_store):
    entries, store = big_store
    assert set(store.nodes) == complete_subtree_ids(MAX_SIZE)
    for (level, index), digest in store.nodes.items():
        assert digest == reference_mth(entries[index << level : (index + 1) << level]), (
            level,
            index,
        )


_sizes = st.integers(min_value=1, max_value=MAX_SIZE)
_bit = st.integers(min_value=0, max_value=255)


@settings(deadline=None, max_examples=150)
@given(data=st.data(), size=_sizes, bit=_bit)
def test_inclusion_proofs_equal_rfc_recursion_and_resist_bit_flips(big_store, data, size, bit):
    entries, store = big_store
    index = data.draw(st.integers(min_value=0, max_value=size - 1), label="index")
    root = reference_mth(entries[:size])
    assert root_hash(size=size, fetch=store.fetch) == root
    assert root_from_frontier(store.frontiers[size]) == root

    proof = inclusion_proof(index=index, size=size, fetch=store.fetch)
    assert proof == reference_path(index, entries[:size])
    leaf = leaf_hash(entries[index])
    assert verify_inclusion(leaf_hash=leaf, index=index, size=size, proof=proof, root=root)

    mask = 1 << (bit % 8)
    assert not verify_inclusion(
        leaf_hash=leaf,
        index=index,
        size=size,
        proof=proof,
        root=_flip(root, byte=bit // 8, mask=mask),
    )
    if proof:
        position = data.draw(st.integers(min_value=0, max_value=len(proof) - 1), label="position")
        wrong = list(proof)
        wrong[position] = _flip(proof[position], byte=bit // 8, mask=mask)
        assert not verify_inclusion(leaf_hash=leaf, index=index, size=size, proof=wrong, root=root)


@settings(deadline=None, max_examples=150)
@given(data=st.data(), new_size=_sizes, bit=_bit)
def test_consistency_proofs_equal_rfc_recursion_and_resist_bit_flips(big_store, data, new_size, bit):
    entries, store = big_store
    old_size = data.draw(st.integers(min_value=1, max_value=new_size), label="old_size")
    old_root, new_root = reference_mth(entries[:old_size]), reference_mth(entries[:new_size])

    proof = consistency_proof(old_size=old_size, new_size=new_size, fetch=store.fetch)
    assert proof == reference_proof(old_size, entries[:new_size])
    assert verify_consistency(old_size=old_size, new_size=new_size, old_root=old_root, new_root=new_root, proof=proof)

    mask = 1 << (bit % 8)
    for wrong_old, wrong_new in [
        (_flip(old_root, byte=bit // 8, mask=mask), new_root),
        (old_root, _flip(new_root, byte=bit // 8, mask=mask)),
    ]:
        assert not verify_consistency(
            old_size=old_size,
            new_size=new_size,
            old_root=wrong_old,
            new_root=wrong_new,
            proof=proof,
        )
    if proof:
        position = data.draw(st.integers(min_value=0, max_value=len(proof) - 1), label="position")
        wrong = list(proof)
        wrong[position] = _flip(proof[position], byte=bit // 8, mask=mask)
        assert not verify_consistency(
            old_size=old_size, new_size=new_size, old_root=old_root, new_root=new_root, proof=wrong
        )


# --- the node-count bound quoted in the module docstring -----------------------------------


def _ceil_log2(n: int) -> int:
    return (n - 1).bit_length()


def inclusion_maximum(n: int) -> int:
    return _ceil_log2(n) + max(n.bit_count(), 2) - 2


def consistency_maximum(n: int) -> int:
    return _ceil_log2(n) + max(n.bit_count(), 2) - 1 - (1 if n in (2, 3) else 0)


class CountingFetch:
    """A fetch that serves any node with a dummy hash and records what was asked for."""

    def __init__(self):
        self.calls: list[int] = []

    def __call__(self, node_ids):
        self.calls.append(len(node_ids))
        return dict.fromkeys(node_ids, bytes(32))


def test_node_count_maxima_are_exact_for_every_request_on_small_trees():
    for n in range(1, 301):
        inclusion_counts = [len(plan_node_ids(inclusion_proof_plan(index=i, size=n))) for i in range(n)]
        assert max(inclusion_counts) == inclusion_maximum(n), n
        assert inclusion_counts[0] == inclusion_maximum(n), n
        if n >= 2:
            consistency_counts = [
                len(plan_node_ids(consistency_proof_plan(old_size=m, new_size=n))) for m in range(1, n)
            ]
            assert max(consistency_counts) == consistency_maximum(n), n


def _large_sizes() -> list[int]:
    picked = random.Random(6962)
    sizes = {2**20, 2**20 - 1}
    for exponent in range(1, 20):
        sizes.update({2**exponent - 1, 2**exponent, 2**exponent + 1})
    sizes.update(picked.randint(2, 2**20) for _ in range(200))
    return sorted(size for size in sizes if size >= 2)


def test_nodes_requested_stay_within_the_bound_up_to_two_to_the_twenty():
    picked = random.Random(9162)
    for n in _large_sizes():
        fetch = CountingFetch()
        inclusion_proof(index=0, size=n, fetch=fetch)
        assert fetch.calls == [inclusion_maximum(n)], n  # index 0 reaches the maximum
        for index in [n - 1, *(picked.randrange(n) for _ in range(20))]:
            fetch = CountingFetch()
            proof = inclusion_proof(index=index, size=n, fetch=fetch)
            assert len(fetch.calls) <= 1 and sum(fetch.calls) <= inclusion_maximum(n) <= 2 * _ceil_log2(n)
            assert len(proof) <= _ceil_log2(n)
        for old_size in [1, n - 1, *(picked.randint(1, n - 1) for _ in range(20))]:
            fetch = CountingFetch()
            consistency_proof(old_size=old_size, new_size=n, fetch=fetch)
            assert len(fetch.calls) == 1 and fetch.calls[0] <= consistency_maximum(n) <= 2 * _ceil_log2(n)
        fetch = CountingFetch()
        root_hash(size=n, fetch=fetch)
        assert fetch.calls == [n.bit_count()]
