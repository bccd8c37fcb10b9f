"""Any JSON at all gives either a project or one ProjectError: never another exception."""

import copy
import json

import pytest
from hypothesis import given, settings, strategies as st

from planner import project
from planner.errors import ProjectError
from tests.conftest import EXAMPLE

json_values = st.recursive(
    st.none() | st.booleans() | st.integers(-10**6, 10**6)
    | st.floats(allow_nan=True, allow_infinity=True) | st.text(max_size=8),
    lambda inner: st.lists(inner, max_size=4) | st.dictionaries(st.text(max_size=6), inner,
                                                                  max_size=4),
    max_leaves=12)

# Every place a value can be put in the example project.
PATHS = [("sample_rate",), ("name",), ("version",), ("analysis",), ("analysis", "f_min"),
         ("analysis", "points"), ("bands",), ("bands", 0), ("bands", 0, "gain_db"),
         ("bands", 0, "filters"), ("bands", 0, "filters", 0), ("bands", 0, "filters", 0, "freq"),
         ("bands", 0, "filters", 0, "order"), ("bands", 0, "filters", 0, "family"),
         ("bands", 1, "filters", 1, "q"), ("bands", 1, "filters", 1, "type"),
         ("bands", 1, "invert"), ("bands", 1, "name")]


@settings(max_examples=300, deadline=None)
@given(path=st.sampled_from(PATHS), value=json_values)
def test_any_value_anywhere_is_accepted_or_refused_cleanly(path, value):
    d = copy.deepcopy(EXAMPLE)
    node = d
    for k in path[:-1]:
        node = node[k]
    node[path[-1]] = value
    try:
        p = project.from_dict(d)
    except ProjectError as e:
        assert str(e)  # a message, with a field path
        return
    # Accepted: it must survive a save/load round trip unchanged.
    assert project.loads(project.dumps(p)) == p


@settings(max_examples=200, deadline=None)
@given(text=st.text(max_size=200))
def test_any_text_is_a_project_error(text):
    try:
        project.loads(text)
    except ProjectError:
        pass


def test_deep_nesting_is_refused_cleanly():
    with pytest.raises(ProjectError, match=r"^(file: not valid JSON|project: must be an object)"):
        project.loads("[" * 100000 + "]" * 100000)


def test_top_level_list_refused():
    with pytest.raises(ProjectError, match=r"^project: must be an object"):
        project.loads(json.dumps([1, 2]))
