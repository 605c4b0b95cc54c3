"""The docstring reader against the three layouts' own guides and against jedi, which reads the
Sphinx and epydoc fields to infer parameter types (jedi.inference.docstrings)."""

from __future__ import annotations

import inspect
import keyword

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from impactscope.resolve.docstrings import documented_types, single_type


def test_numpydoc_guide_layout() -> None:
    # The numpydoc "Docstring standard" (numpydoc.readthedocs.io, from memory): a section title
    # underlined with dashes; `name : type` entries; `x1, x2 : type` share one; `, optional` and
    # a description after a spaced dash are not part of the type.
    doc = inspect.cleandoc('''
        Sum two frames.

        Parameters
        ----------
        x : pd.DataFrame
            Description of parameter `x`.
        y
            Description of parameter `y` (with type not specified).
        x1, x2 : pandas.Series, optional
        order : {'C', 'F', 'A'}
            Choices are not a class.
        frame : pd.DataFrame - MultiIndex
            Indexed by date and asset.

        Returns
        -------
        out : pd.DataFrame
            The sum.

        See Also
        --------
        other : another function
    ''')
    found = documented_types(doc)
    assert dict(found.params) == {"x": "pd.DataFrame", "x1": "pandas.Series", "x2": "pandas.Series",
                                  "frame": "pd.DataFrame"}
    assert found.returns == "pd.DataFrame"


def test_numpydoc_returns_listing_several_values_is_a_tuple() -> None:
    doc = inspect.cleandoc('''
        Returns
        -------
        left : pd.DataFrame
        right : pd.DataFrame
    ''')
    assert documented_types(doc).returns is None


def test_sphinx_info_fields() -> None:
    # Sphinx docs, "Info field lists" (from memory): `:param name:` with `:type name:`, or the
    # type inline as `:param type name:`; `:rtype:` for the return value; roles are stripped.
    doc = inspect.cleandoc('''
        Send a message.

        :param str sender: The person sending the message
        :param frame: The rows
        :type frame: :class:`~pandas.DataFrame`
        :type priority: int or None
        :returns: the frame
        :rtype: pandas.DataFrame
    ''')
    found = documented_types(doc)
    # "int or None" is an optional int, as `Optional[int]` in an annotation.
    assert dict(found.params) == {"sender": "str", "frame": "pandas.DataFrame", "priority": "int"}
    assert found.returns == "pandas.DataFrame"


def test_google_layout() -> None:
    # Sphinx's napoleon, "Example Google Style Python Docstrings" (from memory):
    # `Args:` then `name (type): description`, `(type, optional)`; `Returns:` then `type: text`.
    doc = inspect.cleandoc('''
        Example function with types documented in the docstring.

        Args:
            param1 (int): The first parameter.
            param2 (pd.Series, optional): The second parameter.
                Continued description (not an entry).
            param3: No type.

        Returns:
            pd.DataFrame: The return value.
    ''')
    found = documented_types(doc)
    assert dict(found.params) == {"param1": "int", "param2": "pd.Series"}
    assert found.returns == "pd.DataFrame"


@pytest.mark.parametrize(("text", "expected"), [
    ("pd.DataFrame", "pd.DataFrame"),
    ("pd.DataFrame, optional", "pd.DataFrame"),
    ("DataFrame, default None", "DataFrame"),
    ("pd.Series (optional)", "pd.Series"),
    ("`pandas.Series`", "pandas.Series"),
    (":py:class:`~pandas.Series`", "pandas.Series"),
    ("pd.DataFrame | None", "pd.DataFrame"),
    ("pd.Series or np.ndarray", None),
    ("pd.DataFrame or pd.Series", None),
    ("DataFrame, or tuple or list of DataFrame", None),
    ("list of pd.DataFrame", None),
    ("array_like, shape (n,)", "array_like"),  # a name, though no class: the resolver drops it
    ("{'a', 'b'}", None),
    ("class", None),  # a keyword cannot be a type's name (found on numpy's own docstrings)
    ("np.lambda", None),
    ("", None),
])
def test_single_type(text: str, expected: str | None) -> None:
    assert single_type(text) == expected


# Keywords excluded: jedi returns any word, while a keyword cannot name a type (`single_type`).
_dotted = st.from_regex(r"[a-z]{1,6}(\.[A-Z][a-z]{0,6}){0,2}", fullmatch=True).filter(
    lambda t: not any(keyword.iskeyword(part) for part in t.split(".")))
_param = st.from_regex(r"[a-z][a-z0-9_]{0,8}", fullmatch=True)


@settings(max_examples=200, deadline=None)
@given(name=_param, type_name=_dotted, form=st.sampled_from([":type {n}: {t}", "@type {n}: {t}",
                                                              ":param {t} {n}: text"]))
def test_agrees_with_jedi_on_fields(name: str, type_name: str, form: str) -> None:
    from jedi.inference.docstrings import _search_param_in_docstr

    if form.startswith(":param") and "." in type_name:
        type_name = type_name.replace(".", "_")  # jedi reads an inline type as one word
    doc = "Summary.\n\n" + form.format(n=name, t=type_name)
    assert documented_types(doc).params.get(name) == _search_param_in_docstr(doc, name)[0]


@settings(max_examples=200, deadline=None)
@given(st.text(max_size=300))
def test_any_text_is_read_without_error(doc: str) -> None:
    found = documented_types(doc)
    for t in (*found.params.values(), found.returns):
        assert t is None or single_type(t) == t


def test_attributes_sections() -> None:
    # numpydoc's guide and napoleon's Google example (from memory) both document a class's
    # attributes in an `Attributes` section, as `name : type` and `name (type): text`.
    numpy_doc = inspect.cleandoc('''
        Attributes
        ----------
        survival_ : DataFrame
            Set by fit.
        label : str
    ''')
    google_doc = inspect.cleandoc('''
        A model.

        Attributes:
            survival_ (pd.DataFrame): Set by fit.
            label (str): A name.
    ''')
    assert dict(documented_types(numpy_doc).attributes) == {"survival_": "DataFrame", "label": "str"}
    assert dict(documented_types(google_doc).attributes) == {"survival_": "pd.DataFrame", "label": "str"}
    assert not documented_types(numpy_doc).params


def test_long_lines_are_prose() -> None:
    # Lines far longer than any entry (a hostile or generated docstring) are not read as fields,
    # and reading them stays linear: these would take hours with backtracking patterns.
    long_field = ":param " + "a " * 100_000
    long_role = ":type x: " + "a:" * 100_000
    found = documented_types(f"{long_field}\n{long_role}\n:type y: pd.DataFrame")
    assert dict(found.params) == {"y": "pd.DataFrame"}
    assert single_type("a:" * 100_000) is None
