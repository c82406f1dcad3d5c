"""RFC 6962 Merkle tree maths for the ledger, computed from stored perfect subtrees.

Hashing (RFC 6962 section 2.1; unchanged in RFC 9162 section 2.1.1)::

    leaf_hash(d)    = SHA-256(0x00 || d)
    node_hash(l, r) = SHA-256(0x01 || l || r)
    MTH({})         = SHA-256("")               (EMPTY_ROOT)

Storage model. Leaf ``i`` (0-based) is entry ``i + 1`` of the ledger. For every *complete*
perfect subtree the store keeps one node ``(level, index)`` whose hash is
``MTH(D[index * 2**level : (index + 1) * 2**level])``; level 0 holds the leaf hashes. Nodes
never change once written, so a node that exists today also serves every older tree size
that contains its whole range. The chain head keeps the *frontier*: the roots of the perfect
subtrees that make up the current size, one per set bit of the size, largest (leftmost)
first. ``frontier_append`` turns the frontier for ``n`` leaves into the one for ``n + 1`` and
lists the nodes completed by that append, so appending needs no reads.

Proofs. Every hash in an RFC 6962 inclusion or consistency proof is ``MTH(D[a:b])`` for a
node ``[a, b)`` of the RFC's tree: ``a`` is a multiple of the smallest power of two
``>= b - a``. Such a range is covered by the aligned perfect subtrees given by the binary
expansion of ``b - a`` (``subtrees_of_range``), and ``fold_subtree_hashes`` rebuilds the RFC
hash from them. The ``*_proof_plan`` functions return, for each proof element, the stored
nodes to fold, so a caller fetches everything with one batched query, then calls
``assemble_proof``.

Exact bound on the stored nodes one request needs. With n the tree size,
H = ceil(log2 n) and popcount(n) its number of set bits (the ranges in one proof are
disjoint, so no node is requested twice)::

    root_hash(size=n)                          popcount(n)
    inclusion_proof(index=i, size=n)           max over i:  H + max(popcount(n), 2) - 2
    consistency_proof(old_size=m, new_size=n)  max over m:  H + max(popcount(n), 2) - 1
                                               (one less for n = 2 and n = 3)

For n >= 2 each is at most 2 * H = 2 * ceil(log2 n): 40 nodes for a million entries.
Why: a proof has at most H elements (inclusion) or H + 1 (consistency), and each element
is one stored node except the one element that runs to the right edge n of the tree,
which splits into one node per set bit of its width; that width is below the largest
power of two in n, so it has at most popcount(n) - 1 set bits. The inclusion maximum is
reached at index 0. tests/chain/test_merkle.py checks both maxima exactly for every
index and old size of every tree size up to 300, and the bounds for sampled requests on
sizes up to 2**20.

Verification follows RFC 9162 section 2.1.3.2 (inclusion) and 2.1.4.2 (consistency).
``check_inclusion`` / ``check_consistency`` raise ``ProofError`` saying what is wrong;
``verify_inclusion`` / ``verify_consistency`` never raise on bad input and return ``False``
instead. Hashes are ``bytes`` of length 32 throughout.
"""

from __future__ import annotations

import hashlib
from collections.abc import Callable, Mapping, Sequence

HASH_SIZE = 32
EMPTY_ROOT = hashlib.sha256(b"").digest()

NodeId = tuple[int, int]
"""``(level, index)``: the stored perfect subtree over leaves ``index * 2**level`` to
``(index + 1) * 2**level - 1``."""

ProofPlan = list[list[NodeId]]
"""One list per proof element: the stored nodes, left to right, whose fold is that element."""

NodeFetcher = Callable[[set[NodeId]], Mapping[NodeId, bytes]]


class ProofError(ValueError):
    """A proof cannot be checked or does not prove what it claims; the message says why."""


class MissingNodeError(LookupError):
    """A node named in a proof plan was not among the fetched hashes."""


def leaf_hash(data: bytes) -> bytes:
    """RFC 6962 leaf hash: SHA-256(0x00 || data)."""
    return hashlib.sha256(b"\x00" + bytes(data)).digest()


def node_hash(*, left: bytes, right: bytes) -> bytes:
    """RFC 6962 interior node hash: SHA-256(0x01 || left || right)."""
    return hashlib.sha256(b"\x01" + left + right).digest()


def _require_count(name: str, value: int, *, minimum: int) -> None:
    # bool is an int subclass; a True/False size is always a caller bug.
    if not isinstance(value, int) or isinstance(value, bool):
        raise TypeError(f"{name} must be an integer; got {value!r} ({type(value).__name__})")
    if value < minimum:
        raise ValueError(f"{name} must be an integer >= {minimum}; got {value}")


def _require_hash(name: str, value: object, *, error: type[ValueError] = ValueError) -> None:
    if not isinstance(value, (bytes, bytearray)) or len(value) != HASH_SIZE:
        shown = f"{len(value)} bytes" if isinstance(value, (bytes, bytearray)) else type(value).__name__
        raise error(f"{name} must be a {HASH_SIZE}-byte SHA-256 hash; got {shown}")


def _largest_power_of_two_below(width: int) -> int:
    """The RFC 6962 split point k: the largest power of two strictly smaller than width (>= 2)."""
    return 1 << ((width - 1).bit_length() - 1)


# --- appending -----------------------------------------------------------------------------


def frontier_append(
    *, frontier: Sequence[bytes], size: int, leaf: bytes
) -> tuple[list[bytes], list[tuple[int, int, bytes]]]:
    """Append one leaf hash to a tree of ``size`` leaves whose frontier is ``frontier``.

    Returns the frontier for ``size + 1`` and the stored nodes ``(level, index, hash)`` that
    this append completes: always ``(0, size, leaf)`` first, then each parent it completes,
    bottom up. The input list is not modified.
    """
    _require_count("size", size, minimum=0)
    if len(frontier) != size.bit_count():
        raise ValueError(
            f"a tree of size {size} has a frontier of {size.bit_count()} hashes (one per set bit"
            f" of the size) but {len(frontier)} were given; pass the frontier stored with that size"
        )
    for position, subtree_root in enumerate(frontier):
        _require_hash(f"frontier[{position}]", subtree_root)
    _require_hash("leaf", leaf)

    new_frontier = list(frontier)
    carried = bytes(leaf)
    level = 0
    completed = [(0, size, carried)]
    # Invariant: the frontier's last entry is the perfect subtree just left of `carried`
    # exactly when bit `level` of `size` is set, like a carry in binary addition.
    while (size >> level) & 1:
        carried = node_hash(left=new_frontier.pop(), right=carried)
        level += 1
        completed.append((level, size >> level, carried))
    new_frontier.append(carried)
    return new_frontier, completed


def root_from_frontier(frontier: Sequence[bytes]) -> bytes:
    """The RFC 6962 root of the tree whose frontier this is (EMPTY_ROOT for no leaves)."""
    if not frontier:
        return EMPTY_ROOT
    return fold_subtree_hashes(frontier)


# --- ranges and folding --------------------------------------------------------------------


def subtrees_of_range(*, start: int, end: int) -> list[NodeId]:
    """The aligned perfect subtrees, left to right, that tile ``[start, end)``.

    The tiling follows the binary expansion of ``end - start``, largest piece first. It is
    only defined (and ``fold_subtree_hashes`` of its hashes only equals ``MTH(D[start:end])``)
    when ``start`` is a multiple of the largest power of two ``<= end - start``: then the
    first piece is exactly the RFC's left child ``D[start:start + k]`` and the rest is again
    such a range, so the RFC split rule and the right-to-left fold coincide. Every range in
    an RFC 6962 proof, and every prefix ``[0, n)``, satisfies this.
    """
    _require_count("start", start, minimum=0)
    _require_count("end", end, minimum=start + 1)
    width = end - start
    largest_piece = 1 << (width.bit_length() - 1)
    if start % largest_piece:
        raise ValueError(
            f"[{start}, {end}) is not a Merkle tree node range: start must be a multiple of"
            f" {largest_piece} (the largest power of two <= its width {width}); split the range"
            " at multiples of that power of two first"
        )
    pieces = []
    position = start
    for level in range(width.bit_length() - 1, -1, -1):
        if (width >> level) & 1:
            pieces.append((level, position >> level))
            position += 1 << level
    return pieces


def fold_subtree_hashes(hashes: Sequence[bytes]) -> bytes:
    """Fold the hashes of a ``subtrees_of_range`` tiling, right to left, into the range's MTH.

    Right to left because RFC 6962 splits off the largest power of two on the left, so the
    leftmost piece pairs with the hash of everything to its right.
    """
    if not hashes:
        raise ValueError("nothing to fold: pass at least one subtree hash (use EMPTY_ROOT for an empty tree)")
    folded = hashes[-1]
    for left in reversed(hashes[:-1]):
        folded = node_hash(left=left, right=folded)
    return folded


# --- proof planning ------------------------------------------------------------------------


def _inclusion_ranges(index: int, size: int) -> list[tuple[int, int]]:
    """RFC 6962 section 2.1.1 PATH(index, D[0:size]) as ranges, leaf sibling first."""
    siblings = []
    low, high = 0, size
    while high - low > 1:
        split = low + _largest_power_of_two_below(high - low)
        if index < split:
            siblings.append((split, high))
            high = split
        else:
            siblings.append((low, split))
            low = split
    siblings.reverse()
    return siblings


def _consistency_ranges(old_size: int, new_size: int) -> list[tuple[int, int]]:
    """RFC 6962 section 2.1.2 PROOF(old_size, D[0:new_size]) as ranges, in proof order."""
    if old_size in (0, new_size):
        return []
    elements = []
    low, high = 0, new_size
    # `old_is_whole_subtree` is the RFC's flag b: true while [low, high) still starts at 0,
    # i.e. while the old tree's root would be the subtree itself and need not be sent.
    old_is_whole_subtree = True
    while old_size != high:
        split = low + _largest_power_of_two_below(high - low)
        if old_size <= split:
            elements.append((split, high))
            high = split
        else:
            elements.append((low, split))
            low = split
            old_is_whole_subtree = False
    if not old_is_whole_subtree:
        elements.append((low, high))
    elements.reverse()
    return elements


def _plan_for(ranges: list[tuple[int, int]]) -> ProofPlan:
    return [subtrees_of_range(start=start, end=end) for start, end in ranges]


def inclusion_proof_plan(*, index: int, size: int) -> ProofPlan:
    """Stored nodes for the inclusion proof of leaf ``index`` in the tree of ``size`` leaves."""
    _require_count("size", size, minimum=1)
    _require_count("index", index, minimum=0)
    if index >= size:
        raise ValueError(f"index must be below size (leaves are numbered 0..size-1); got index {index}, size {size}")
    return _plan_for(_inclusion_ranges(index, size))


def consistency_proof_plan(*, old_size: int, new_size: int) -> ProofPlan:
    """Stored nodes for the consistency proof from ``old_size`` to ``new_size`` leaves.

    Empty when ``old_size`` is 0 or equal to ``new_size`` (nothing to prove).
    """
    _require_count("old_size", old_size, minimum=0)
    _require_count("new_size", new_size, minimum=0)
    if old_size > new_size:
        raise ValueError(
            f"old_size must not exceed new_size (a log only grows); got old_size {old_size}, new_size {new_size}"
        )
    return _plan_for(_consistency_ranges(old_size, new_size))


def plan_node_ids(plan: ProofPlan) -> set[NodeId]:
    """Every stored node a plan needs: what to fetch in one batched query."""
    return {node_id for element in plan for node_id in element}


def assemble_proof(*, plan: ProofPlan, nodes: Mapping[NodeId, bytes]) -> list[bytes]:
    """Fold fetched node hashes into the proof hashes, in RFC order."""
    missing = sorted(plan_node_ids(plan) - nodes.keys())
    if missing:
        raise MissingNodeError(
            f"{len(missing)} node(s) named in the plan were not fetched, first {missing[:5]}"
            " as (level, index); fetch every id in plan_node_ids(plan)"
        )
    return [fold_subtree_hashes([nodes[node_id] for node_id in element]) for element in plan]


def _fetch_and_assemble(plan: ProofPlan, fetch: NodeFetcher) -> list[bytes]:
    needed = plan_node_ids(plan)
    if not needed:
        return []
    return assemble_proof(plan=plan, nodes=fetch(needed))


def inclusion_proof(*, index: int, size: int, fetch: NodeFetcher) -> list[bytes]:
    """The inclusion proof; ``fetch(node_ids) -> {node_id: hash}`` is called at most once."""
    return _fetch_and_assemble(inclusion_proof_plan(index=index, size=size), fetch)


def consistency_proof(*, old_size: int, new_size: int, fetch: NodeFetcher) -> list[bytes]:
    """The consistency proof; ``fetch`` is called at most once (not at all if it is empty)."""
    return _fetch_and_assemble(consistency_proof_plan(old_size=old_size, new_size=new_size), fetch)


def root_hash(*, size: int, fetch: NodeFetcher) -> bytes:
    """The RFC 6962 root for ``size`` leaves from stored nodes; ``fetch`` is called at most once."""
    _require_count("size", size, minimum=0)
    if size == 0:
        return EMPTY_ROOT
    (root,) = _fetch_and_assemble([subtrees_of_range(start=0, end=size)], fetch)
    return root


# --- verification (RFC 9162 section 2.1.3.2 and 2.1.4.2) ---------------------------------


def _require_proof_count(name: str, value: object) -> None:
    if not isinstance(value, int) or isinstance(value, bool) or value < 0:
        raise ProofError(f"{name} must be a non-negative integer; got {value!r}")


def root_from_inclusion_proof(*, leaf_hash: bytes, index: int, size: int, proof: Sequence[bytes]) -> bytes:
    """The root that ``proof`` implies for ``leaf_hash`` at ``index`` in a tree of ``size``.

    RFC 9162 section 2.1.3.2 steps 1-4 plus the ``sn == 0`` test of step 5; raises
    ``ProofError`` when the proof has the wrong length or shape for that index and size.
    """
    _require_proof_count("index", index)
    _require_proof_count("size", size)
    if index >= size:
        raise ProofError(f"leaf index {index} is not in a tree of size {size} (needs index < size)")
    _require_hash("leaf_hash", leaf_hash, error=ProofError)
    for position, element in enumerate(proof):
        _require_hash(f"proof[{position}]", element, error=ProofError)

    first_node, last_node, computed = index, size - 1, bytes(leaf_hash)
    for element in proof:
        if last_node == 0:
            raise ProofError(f"proof has more hashes than an inclusion proof for index {index} of size {size}")
        if first_node & 1 or first_node == last_node:
            computed = node_hash(left=element, right=computed)
            # On the right edge a node without a right sibling is promoted unchanged, so
            # skip the levels where that happens.
            while first_node and not first_node & 1:
                first_node >>= 1
                last_node >>= 1
        else:
            computed = node_hash(left=computed, right=element)
        first_node >>= 1
        last_node >>= 1
    if last_node != 0:
        raise ProofError(f"proof has fewer hashes than an inclusion proof for index {index} of size {size}")
    return computed


def check_inclusion(*, leaf_hash: bytes, index: int, size: int, proof: Sequence[bytes], root: bytes) -> None:
    """Raise ``ProofError`` unless ``proof`` shows ``leaf_hash`` at ``index`` under ``root``."""
    _require_hash("root", root, error=ProofError)
    computed = root_from_inclusion_proof(leaf_hash=leaf_hash, index=index, size=size, proof=proof)
    if computed != root:
        raise ProofError(f"inclusion proof for index {index} of size {size} leads to a different root")


def _roots_from_consistency_proof(
    old_size: int, new_size: int, old_root: bytes, proof: Sequence[bytes]
) -> tuple[bytes, bytes]:
    """RFC 9162 section 2.1.4.2 steps 1-6 for 0 < old_size < new_size: (old root, new root)."""
    if not proof:
        raise ProofError(f"a consistency proof from size {old_size} to {new_size} cannot be empty")
    path = list(proof)
    if old_size & (old_size - 1) == 0:
        # The old tree is then a whole subtree of the new one; RFC 6962 leaves its root out.
        path.insert(0, old_root)
    first_node, last_node = old_size - 1, new_size - 1
    while first_node & 1:
        first_node >>= 1
        last_node >>= 1
    old_computed = new_computed = path[0]
    for element in path[1:]:
        if last_node == 0:
            raise ProofError(f"proof has more hashes than a consistency proof from {old_size} to {new_size}")
        if first_node & 1 or first_node == last_node:
            old_computed = node_hash(left=element, right=old_computed)
            new_computed = node_hash(left=element, right=new_computed)
            while first_node and not first_node & 1:
                first_node >>= 1
                last_node >>= 1
        else:
            new_computed = node_hash(left=new_computed, right=element)
        first_node >>= 1
        last_node >>= 1
    if last_node != 0:
        raise ProofError(f"proof has fewer hashes than a consistency proof from {old_size} to {new_size}")
    return old_computed, new_computed


def check_consistency(
    *, old_size: int, new_size: int, old_root: bytes, new_root: bytes, proof: Sequence[bytes]
) -> None:
    """Raise ``ProofError`` unless ``proof`` shows tree ``old_size`` is a prefix of ``new_size``.

    RFC 9162 defines the algorithm for 0 < old_size < new_size. Outside that range: equal
    sizes need an empty proof and equal roots; old_size 0 needs an empty proof and
    ``old_root == EMPTY_ROOT`` (an empty tree has exactly that root, RFC 6962 section 2.1).
    """
    _require_proof_count("old_size", old_size)
    _require_proof_count("new_size", new_size)
    if old_size > new_size:
        raise ProofError(f"old size {old_size} exceeds new size {new_size}; a log never shrinks")
    _require_hash("old_root", old_root, error=ProofError)
    _require_hash("new_root", new_root, error=ProofError)
    for position, element in enumerate(proof):
        _require_hash(f"proof[{position}]", element, error=ProofError)

    if old_size == 0 or old_size == new_size:
        if proof:
            raise ProofError(f"a consistency proof from size {old_size} to {new_size} must be empty")
        if old_size == 0 and old_root != EMPTY_ROOT:
            raise ProofError("the root of an empty tree must be EMPTY_ROOT, SHA-256 of no bytes")
        if old_size == new_size and old_root != new_root:
            raise ProofError(f"two different roots for the same size {old_size}: the log forked")
        return
    old_computed, new_computed = _roots_from_consistency_proof(old_size, new_size, old_root, proof)
    if old_computed != old_root:
        raise ProofError(f"consistency proof does not lead to the root held for size {old_size}")
    if new_computed != new_root:
        raise ProofError(f"consistency proof does not lead to the root given for size {new_size}")


def verify_inclusion(*, leaf_hash: bytes, index: int, size: int, proof: Sequence[bytes], root: bytes) -> bool:
    """``check_inclusion`` as a boolean: never raises for bad input."""
    try:
        check_inclusion(leaf_hash=leaf_hash, index=index, size=size, proof=proof, root=root)
    except ProofError:
        return False
    return True


def verify_consistency(
    *, old_size: int, new_size: int, old_root: bytes, new_root: bytes, proof: Sequence[bytes]
) -> bool:
    """``check_consistency`` as a boolean: never raises for bad input."""
    try:
        check_consistency(old_size=old_size, new_size=new_size, old_root=old_root, new_root=new_root, proof=proof)
    except ProofError:
        return False
    return True
