"""Model terms, model matrices and alias detection (core/terms.py)."""
from __future__ import annotations

import itertools

import numpy as np
import pytest

from tradeoff.errors import ModelError
from tradeoff.model.dependence import find_aliases
from tradeoff.model.terms import (hierarchy_closure, model_matrix, model_terms,
                            parse_term)

NAMES = ["protein", "glycerol", "binder", "mix_temp"]


def labels(spec, names=NAMES, n_settings=None):
    return [t.label for t in model_terms(spec, names, n_settings=n_settings)[0]]


def test_named_models_have_the_textbook_number_of_terms():
    # common practice: k factors give 1 + k main-effect terms, k(k-1)/2 two-factor
    # interactions, 2^k terms for the full factorial model, k squares
    assert labels("main") == ["intercept"] + NAMES
    inter = labels("interactions")
    assert len(inter) == 1 + 4 + 6
    assert inter[5] == "protein:glycerol" and inter[-1] == "binder:mix_temp"
    full = labels("full")
    assert len(full) == 2 ** 4 and full[-1] == "protein:glycerol:binder:mix_temp"
    quad = labels("quadratic", n_settings=[3, 3, 2, 3])
    assert quad[-3:] == ["protein^2", "glycerol^2", "mix_temp^2"]  # binder has 2 levels
    assert len(quad) == 11 + 3


def test_explicit_terms_are_put_in_study_order_and_sorted_by_order():
    got = labels(["glycerol:protein", "protein^2", "glycerol", "protein"],
                 n_settings=[3, 3, 2, 3])
    assert got == ["intercept", "glycerol", "protein", "protein:glycerol", "protein^2"]


def test_non_hierarchical_list_is_noted():
    _, notes = model_terms(["protein:glycerol"], NAMES)
    assert "not hierarchical" in notes[0] and "glycerol, protein" in notes[0]


@pytest.mark.parametrize("term, message", [
    ("protien", r"'protien' is not a factor of the study \(did you mean 'protein'\?\)"),
    ("protein*glycerol", r"join factor names with ':'"),
    ("protein^3", r"only squares"),
    ("protein:protein", r"appears twice"),
    ("protein^2:glycerol", r"cannot be combined"),
    ("", r"a term is blank"),
])
def test_bad_term_labels(term, message):
    with pytest.raises(ModelError, match=message):
        parse_term(term, NAMES, response="hardness")


def test_duplicate_and_two_level_square_are_refused():
    with pytest.raises(ModelError, match=r"response 'y': term 'glycerol:protein' is listed "
                                         r"twice \(as 'protein:glycerol'\)"):
        model_terms(["protein:glycerol", "glycerol:protein"], NAMES, response="y")
    with pytest.raises(ModelError, match=r"response 'y': term 'binder\^2': factor 'binder' "
                                         r"has only two settings"):
        model_terms(["binder^2"], NAMES, n_settings=[3, 3, 2, 3], response="y")
    with pytest.raises(ModelError, match=r"model 'quadratc' is not one I know \(did you "
                                         r"mean 'quadratic'\?\)"):
        model_terms("quadratc", NAMES)


def test_model_matrix_matches_sklearn_polynomial_features():
    # Independent construction: scikit-learn's PolynomialFeatures (degree 2).
    from sklearn.preprocessing import PolynomialFeatures

    rng = np.random.default_rng(1)
    X = rng.uniform(-1, 1, (30, 4))
    terms, _ = model_terms("quadratic", NAMES)
    M = model_matrix(X, terms)
    poly = PolynomialFeatures(degree=2)
    P = poly.fit_transform(X)
    names = poly.get_feature_names_out(NAMES)
    # sklearn writes 'protein glycerol' and 'protein^2'
    sk = {n.replace(" ", ":"): P[:, i] for i, n in enumerate(names)}
    sk["intercept"] = sk.pop("1")
    for i, t in enumerate(terms):
        np.testing.assert_allclose(M[:, i], sk[t.label], rtol=0, atol=1e-15)


def test_three_factor_interaction_columns():
    rng = np.random.default_rng(2)
    X = rng.uniform(-1, 1, (10, 4))
    terms, _ = model_terms("full", NAMES)
    M = model_matrix(X, terms)
    for i, t in enumerate(terms):
        np.testing.assert_allclose(M[:, i], np.prod(X[:, list(t.factors)], axis=1)
                                   if t.factors else 1.0, atol=1e-15)


def _half_fraction():
    # 2^(4-1) with generator D = ABC (defining relation I = ABCD)
    base = np.array(list(itertools.product([-1, 1], repeat=3)))[:, ::-1].astype(float)
    return np.column_stack([base, base.prod(axis=1)])


def test_half_fraction_aliases_two_factor_interactions_in_pairs():
    # Box, Hunter & Hunter (2005), ch. 6: with I = ABCD the two-factor interactions
    # are aliased in pairs AB = CD, AC = BD, AD = BC.
    names = ["a", "b", "c", "d"]
    terms, _ = model_terms("interactions", names)
    keep, aliases = find_aliases(model_matrix(_half_fraction(), terms), terms)
    assert aliases == {"b:c": {"a:d": 1.0}, "b:d": {"a:c": 1.0}, "c:d": {"a:b": 1.0}}
    assert [t.label for t, k in zip(terms, keep) if k] == [
        "intercept", "a", "b", "c", "d", "a:b", "a:c", "a:d"]


def test_squares_in_a_two_level_design_with_centre_points_are_one_chain():
    # common practice: with only factorial and centre runs every square column is
    # the same (1 at the corners, 0 at the centre), so one curvature term is estimable
    corners = np.array(list(itertools.product([-1, 1], repeat=3)), dtype=float)
    X = np.vstack([corners, np.zeros((3, 3))])
    terms, _ = model_terms("quadratic", ["a", "b", "c"], n_settings=[3, 3, 3])
    keep, aliases = find_aliases(model_matrix(X, terms), terms)
    assert aliases == {"b^2": {"a^2": 1.0}, "c^2": {"a^2": 1.0}}
    assert keep.sum() == len(terms) - 2


def test_constant_factor_is_aliased_with_intercept():
    X = np.column_stack([np.tile([-1.0, 1.0], 4), np.ones(8)])
    terms, _ = model_terms("main", ["a", "b"])
    keep, aliases = find_aliases(model_matrix(X, terms), terms)
    assert aliases == {"b": {"intercept": 1.0}}


def test_hierarchy_closure():
    terms, _ = model_terms("full", ["a", "b", "c"])
    abc = [t for t in terms if t.label == "a:b:c"]
    assert hierarchy_closure(abc, terms) == {"a:b:c", "a:b", "a:c", "b:c", "a", "b", "c",
                                             "intercept"}
