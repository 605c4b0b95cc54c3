"""Tests of exposure.reader: PEP 508 requirement strings and PEP 503 names."""

from __future__ import annotations

from impactscope.exposure import Exposure, classify, declared_requirements, environment_for_python

from .helpers import PY312, one


# Source: PEP 508, the test list of its "Complete Grammar" section ("name>=3,<2",
# "name [fred,bar] @ http://foo.com ; python_version=='2.7'", the os_name precedence examples).
def test_pep508_examples():
    files = {
        "requirements.txt": (
            b"name>=3,<2\n"
        )
    }
    declared = one(files, "name")
    assert classify([declared], "3", PY312) is Exposure.SHIELDED  # nothing satisfies >=3,<2

    url = one({"requirements.txt": b"name [fred,bar] @ http://foo.com ; python_version=='2.7'\n"}, "name")
    assert url.direct_reference and url.specifier is None
    assert classify([url], "1.0", environment_for_python("2.7")) is Exposure.UNCONSTRAINED

    # Should parse as (a and b) or c.
    grouped = one({"requirements.txt": b"name>=1; os_name=='a' and os_name=='b' or os_name=='c'\n"}, "name")
    assert grouped.marker.evaluate({"os_name": "c"}) is True
    assert grouped.marker.evaluate({"os_name": "a"}) is False
    either = one({"requirements.txt": b"name<2; os_name=='a' or os_name=='b'\n"}, "name")
    assert classify([either], "2.0", {"os_name": "b"}) is Exposure.SHIELDED
    assert classify([either], "2.0", {"os_name": "posix"}) is Exposure.UNCONSTRAINED


# Source: PEP 503, "Normalized Names": runs of -, _ and . become one -, then lowercase.
def test_names_compare_after_pep503_normalisation():
    files = {
        "requirements.txt": b"HeronFrame>=1\nheron_frame>=2\nHeron.Frame>=3\nHERON--frame>=4\n",
    }
    assert [d.text for d in declared_requirements(files, "heronframe")] == ["HeronFrame>=1"]
    assert [d.text for d in declared_requirements(files, "heron-frame")] == [
        "heron_frame>=2",
        "Heron.Frame>=3",
        "HERON--frame>=4",
    ]
