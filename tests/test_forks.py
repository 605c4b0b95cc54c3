import hashlib
import time
from collections import Counter

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from impactscope.forks import ForkError, fork_families, unique_sources


def h(text):
    return hashlib.sha256(text.encode()).hexdigest()


EMPTY_INIT = h("")


def project(*contents, prefix="pkg"):
    files = {f"{prefix}/__init__.py": EMPTY_INIT}
    files.update({f"{prefix}/m{i}.py": h(c) for i, c in enumerate(contents)})
    return files


def test_unique_sources_counts_distinct_hashes():
    hashes = {
        "tern": {"a.py": h("x"), "b.py": h("y")},
        "tern-fork": {"a.py": h("x"), "src/b.py": h("y"), "c.py": h("z")},
        "empty": {},
    }
    assert unique_sources(hashes) == 3
    assert unique_sources({}) == 0


def test_exact_copies_form_a_family():
    base = project("a", "b", "c")
    hashes = {"tern": base, "tern-mirror": dict(base), "gull": project("q", "r")}
    assert fork_families(hashes) == {"tern": "tern", "tern-mirror": "tern"}


def test_threshold_boundary_nine_of_ten():
    # 9 of 10 files shared in each project: exactly 0.9, which meets the default threshold.
    shared = [f"f{i}" for i in range(9)]
    a = {f"m{i}.py": h(c) for i, c in enumerate(shared + ["only-a"])}
    b = {f"m{i}.py": h(c) for i, c in enumerate(shared + ["only-b"])}
    assert fork_families({"a": a, "b": b}) == {"a": "a", "b": "a"}
    assert fork_families({"a": a, "b": b}, threshold=0.91) == {}


def test_small_project_inside_a_big_one_is_not_a_fork():
    small = {f"m{i}.py": h(f"f{i}") for i in range(3)}
    big = {f"m{i}.py": h(f"f{i}") for i in range(30)}
    # All of `small` is in `big`, but only 3 of 30 of `big` is in `small`.
    assert fork_families({"small": small, "big": big}) == {}
    assert fork_families({"small": small, "big": big}, threshold=0.1) == {"big": "big", "small": "big"}


def test_multiset_counts_duplicate_files():
    a = {"x/a.py": h("same"), "y/a.py": h("same")}
    b = {"x/a.py": h("same"), "y/b.py": h("other")}
    assert fork_families({"a": a, "b": b}, threshold=0.5) == {"a": "a", "b": "a"}
    assert fork_families({"a": a, "b": b}, threshold=0.6) == {}


def test_families_are_connected_components():
    # p1 ~ p2 and p2 ~ p3 but p1 and p3 share too little directly: one family by transitivity.
    files = [h(f"f{i}") for i in range(12)]
    p1 = {f"{i}.py": files[i] for i in range(0, 10)}
    p2 = {f"{i}.py": files[i] for i in range(1, 11)}
    p3 = {f"{i}.py": files[i] for i in range(2, 12)}
    result = fork_families({"zeta": p1, "alpha": p2, "mid": p3}, threshold=0.9)
    assert result == {"alpha": "alpha", "mid": "alpha", "zeta": "alpha"}


def test_projects_without_python_files_are_never_in_a_family():
    notes = {"README.md": h("hello"), "data.csv": h("1,2")}
    hashes = {"a": notes, "b": dict(notes), "c": {}, "d": {}}
    assert fork_families(hashes) == {}
    # Non-Python files neither help nor hurt the overlap.
    py = {"m.py": h("code")}
    assert fork_families({"a": {**py, "x.txt": h("1")}, "b": {**py, "x.txt": h("2")}}) == {"a": "a", "b": "a"}


def test_bad_threshold():
    for bad in (0, -0.5, 1.5, True):
        with pytest.raises(ForkError, match="threshold"):
            fork_families({}, threshold=bad)
    assert issubclass(ForkError, ValueError)


def naive_families(project_hashes, threshold):
    """All-pairs reference: the definition in the module docstring, applied literally."""
    import math

    names = sorted(project_hashes)
    py = {n: Counter(d for p, d in project_hashes[n].items() if p.endswith(".py")) for n in names}
    parent = {n: n for n in names}

    def find(n):
        while parent[n] != n:
            n = parent[n]
        return n

    for i, a in enumerate(names):
        for b in names[i + 1:]:
            if not py[a] or not py[b]:
                continue
            shared = sum((py[a] & py[b]).values())
            larger = max(sum(py[a].values()), sum(py[b].values()))
            if shared >= max(1, math.ceil(threshold * larger - 1e-9)):
                ra, rb = find(a), find(b)
                if ra != rb:
                    parent[max(ra, rb)] = min(ra, rb)
    groups = {}
    for n in names:
        groups.setdefault(find(n), []).append(n)
    return {n: min(g) for g in groups.values() if len(g) >= 2 for n in g}


corpora = st.dictionaries(
    keys=st.text(alphabet="abcdefgh", min_size=1, max_size=3),
    values=st.dictionaries(
        keys=st.sampled_from([f"m{i}.py" for i in range(6)] + ["notes.txt"]),
        values=st.sampled_from([h(str(i)) for i in range(5)]),
        max_size=7,
    ),
    max_size=12,
)


@settings(max_examples=200, deadline=None)
@given(corpora, st.sampled_from([0.3, 0.5, 0.75, 0.9, 1.0]))
def test_matches_all_pairs_definition(hashes, threshold):
    assert fork_families(hashes, threshold) == naive_families(hashes, threshold)


def partition(families):
    blocks = {}
    for name, family in families.items():
        blocks.setdefault(family, set()).add(name)
    return {frozenset(block) for block in blocks.values()}


@settings(max_examples=200, deadline=None)
@given(corpora, st.randoms(use_true_random=False))
def test_relation_is_symmetric_and_ids_deterministic(hashes, rng):
    result = fork_families(hashes, 0.5)
    # Input order does not matter, and a family's id is its smallest member.
    items = list(hashes.items())
    rng.shuffle(items)
    assert fork_families(dict(items), 0.5) == result
    for name, family in result.items():
        assert family == min(n for n, f in result.items() if f == family)
    # Symmetric: relabelling the projects (so each pair is seen in the other order) relabels the
    # families and changes nothing else.
    names = list(hashes)
    shuffled = names[:]
    rng.shuffle(shuffled)
    rename = dict(zip(names, shuffled))
    relabelled = fork_families({rename[n]: files for n, files in hashes.items()}, 0.5)
    assert partition(relabelled) == {frozenset(rename[n] for n in block) for block in partition(result)}


def test_scales_to_ten_thousand_projects():
    hashes = {}
    for i in range(10_000):
        files = {"pkg/__init__.py": EMPTY_INIT, "setup.py": h("boilerplate setup")}
        files.update({f"pkg/m{k}.py": h(f"project {i} module {k}") for k in range(8)})
        hashes[f"proj{i:05d}"] = files
    for i in range(0, 10_000, 100):  # every hundredth project has a fork that changed one file
        fork = dict(hashes[f"proj{i:05d}"])
        fork["pkg/m0.py"] = h(f"patched {i}")
        hashes[f"proj{i:05d}-fork"] = fork
    start = time.perf_counter()
    result = fork_families(hashes, threshold=0.9)
    elapsed = time.perf_counter() - start
    assert len(result) == 200
    assert result["proj00100-fork"] == "proj00100"
    assert elapsed < 30, elapsed
