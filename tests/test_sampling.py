import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from impactscope.estimate import cochran_sample_size
from impactscope.sampling import (
    Member,
    SamplingError,
    draw_sample,
    draw_stratified,
    needed_size,
    parse_population,
    read_population,
    weight_strata,
)

NAMES = [f"project-{i:03d}" for i in range(100)]


def test_text_list_skips_comments_and_blanks(tmp_path):
    path = tmp_path / "population.txt"
    path.write_text(
        "# downstream projects of heronframe\n"
        "\n"
        "tern-reports\n"
        "   gull_etl   # mirrored from the archive\n"
        "plover#2\n"
        "corpus/archive/sandpiper.zip\n",
        encoding="utf-8",
    )
    population = read_population(path)
    assert population.names == ("tern-reports", "gull_etl", "plover#2", "corpus/archive/sandpiper.zip")
    assert population.members[1] == Member("gull_etl", 1.0, 4)
    assert population.source == str(path)
    assert len(population) == 4


def test_csv_list_with_weights(tmp_path):
    path = tmp_path / "population.csv"
    path.write_text("project,Weight,notes\ntern,12.5,x\n\ngull,0,\n\"plover, jr\",3,\n", encoding="utf-8")
    population = read_population(path)
    assert population.names == ("tern", "gull", "plover, jr")
    assert population.weights == (12.5, 0.0, 3.0)
    assert [m.line for m in population.members] == [2, 4, 5]


def test_csv_without_weight_column_weighs_one(tmp_path):
    path = tmp_path / "p.csv"
    path.write_text("project,url\na,http://x\nb,http://y\n", encoding="utf-8")
    assert read_population(path).weights == (1.0, 1.0)


@pytest.mark.parametrize(
    ("text", "message"),
    [
        ("project,weight\na,1\nb,heavy\n", r"p\.csv:3: weight 'heavy' is not a number"),
        ("project,weight\na,-1\n", r"p\.csv:2: weight '-1' must be"),
        ("project,weight\na,nan\n", r"p\.csv:2: weight 'nan' must be"),
        ("project,weight\na,1\nb\n", r"p\.csv:3: project 'b' has no weight"),
        ("project,weight\n,1\n", r"p\.csv:2: the project \(first column\) is empty"),
        ("project,weight\na,1\na,2\n", r"p\.csv:3: project 'a' is listed twice \(first on line 2\)"),
        ("project,weight\n", r"p\.csv: the population list names no projects"),
        ("", r"p\.csv:1: a CSV population list needs a header"),
        ("weight,project\n1,a\n", r"p\.csv:1: the first column must hold the project"),
    ],
)
def test_csv_errors_name_file_and_line(tmp_path, text, message):
    path = tmp_path / "p.csv"
    path.write_text(text, encoding="utf-8")
    with pytest.raises(SamplingError, match=message):
        read_population(path)


def test_text_errors_name_file_and_line(tmp_path):
    path = tmp_path / "p.txt"
    path.write_text("# nothing yet\n\n", encoding="utf-8")
    with pytest.raises(SamplingError, match=r"p\.txt: the population list names no projects"):
        read_population(path)
    path.write_text("a\nb\na\n", encoding="utf-8")
    with pytest.raises(SamplingError, match=r"p\.txt:3: project 'a' is listed twice"):
        read_population(path)
    with pytest.raises(SamplingError, match="cannot read"):
        read_population(tmp_path / "missing.txt")
    assert issubclass(SamplingError, ValueError)


def test_sample_too_large_names_the_file():
    population = parse_population("a\nb\nc\n", "pop.txt")
    with pytest.raises(SamplingError, match=r"pop\.txt: sample size 4 exceeds the population of 3"):
        population.sample(4, seed=1)
    with pytest.raises(SamplingError, match=r"pop\.txt: sample size 4 exceeds"):
        population.stratified(4, seed=1)


def test_draw_sample_is_reproducible():
    assert draw_sample(NAMES, 20, seed=7) == draw_sample(NAMES, 20, seed=7)
    assert draw_sample(NAMES, 20, seed="release-3.0") == draw_sample(NAMES, 20, seed="release-3.0")
    assert draw_sample(NAMES, 20, seed=7) != draw_sample(NAMES, 20, seed=8)


@settings(max_examples=200, deadline=None)
@given(st.integers(min_value=1, max_value=60), st.data(), st.integers())
def test_draw_sample_properties(population_size, data, seed):
    names = [f"p{i}" for i in range(population_size)]
    size = data.draw(st.integers(min_value=0, max_value=population_size))
    sample = draw_sample(names, size, seed)
    assert len(sample) == size
    assert len(set(sample)) == size
    assert set(sample) <= set(names)
    # Population order, not draw order.
    assert sample == [n for n in names if n in set(sample)]


def test_draw_sample_errors():
    with pytest.raises(SamplingError, match="population is empty"):
        draw_sample([], 0, seed=1)
    with pytest.raises(SamplingError, match="'a' appears more than once"):
        draw_sample(["a", "b", "a"], 1, seed=1)
    with pytest.raises(SamplingError, match="non-negative integer"):
        draw_sample(["a"], -1, seed=1)
    assert draw_sample(["a", "b"], 2, seed=1) == ["a", "b"]


def test_weight_strata_are_quantiles_by_rank():
    names = ["a", "b", "c", "d", "e", "f", "g", "h", "i"]
    weights = [9, 1, 8, 2, 7, 3, 6, 4, 5]
    strata = weight_strata(names, weights, strata=4)
    assert strata == (("b", "d", "f"), ("h", "i"), ("g", "e"), ("c", "a"))
    # Ties stay in population order and never leave a stratum empty.
    assert weight_strata(["x", "y", "z"], [1, 1, 1], strata=4) == (("x",), ("y",), ("z",))


@settings(max_examples=200, deadline=None)
@given(
    st.lists(st.floats(min_value=0, max_value=1e6), min_size=1, max_size=80),
    st.integers(min_value=1, max_value=6),
    st.data(),
    st.integers(),
)
def test_draw_stratified_properties(weights, strata, data, seed):
    names = [f"p{i}" for i in range(len(weights))]
    size = data.draw(st.integers(min_value=0, max_value=len(names)))
    sample = draw_stratified(names, weights, size, seed, strata=strata)
    assert len(sample) == size == len(set(sample))
    assert sample == [n for n in names if n in set(sample)]
    assert sample == draw_stratified(names, weights, size, seed, strata=strata)
    groups = weight_strata(names, weights, strata)
    chosen = set(sample)
    if size >= len(groups):
        assert all(chosen & set(group) for group in groups)
    for group in groups:
        # Proportional allocation, give or take the rounding and the one-per-stratum floor.
        expected = size * len(group) / len(names)
        assert abs(len(chosen & set(group)) - expected) < 2


def test_draw_stratified_proportional_allocation():
    names = [f"p{i}" for i in range(40)]
    weights = list(range(40))
    sample = draw_stratified(names, weights, 12, seed=3, strata=4)
    per_stratum = [len(set(sample) & set(g)) for g in weight_strata(names, weights, 4)]
    assert per_stratum == [3, 3, 3, 3]


def test_draw_stratified_errors():
    with pytest.raises(SamplingError, match="2 projects but 1 weights"):
        draw_stratified(["a", "b"], [1], 1, seed=0)
    with pytest.raises(SamplingError, match="project 'b' has weight -2"):
        draw_stratified(["a", "b"], [1, -2], 1, seed=0)
    with pytest.raises(SamplingError, match="strata must be a positive integer"):
        draw_stratified(["a", "b"], [1, 2], 1, seed=0, strata=0)


def test_needed_size_uses_cochran_with_fpc():
    # Cochran's formula with the finite population correction; 278 for N = 1000 at 5%, 95%.
    assert needed_size(1000, 0.05) == 278 == cochran_sample_size(0.05, population=1000)
    assert needed_size(50, 0.05, 0.99) == cochran_sample_size(0.05, 0.99, population=50)
    assert needed_size(1, 0.05) == 1
    with pytest.raises(SamplingError, match="positive integer"):
        needed_size(0, 0.05)
    with pytest.raises(SamplingError, match="margin"):
        needed_size(100, 2.0)
