#!/usr/bin/python3
"""Writes the scikit-learn reference outputs the transform tests compare to.

Run with the Debian python that has scikit-learn 1.2.1 (/usr/bin/python3):
    /usr/bin/python3 tests/testdata/sklearn/make_transform_reference.py

Inputs are the datasets bundled inside the Debian python3-sklearn package
(sklearn.datasets.load_wine() and load_diabetes() read files shipped with the
package; nothing is downloaded). The script writes, next to itself:

  wine.csv           the 178 x 13 wine features plus the class index (0..2)
  wine_blanked.csv   the same features with about 10% of the values blanked
  diabetes.csv       the 442 x 10 (scaled) diabetes features plus the target
  transform_reference.json
                     for every case: the scikit-learn function, its
                     parameters, the input file and columns, the fitted
                     constants and the transformed output (row-major), with
                     the sklearn/numpy versions in "provenance".

Numbers are written with repr(), which round-trips binary64 exactly.
"""
import json
import os
import platform

import numpy as np
import sklearn
from sklearn.datasets import load_diabetes, load_wine
from sklearn.decomposition import PCA
from sklearn.feature_selection import (SelectKBest, VarianceThreshold, f_classif,
                                       f_regression, r_regression)
from sklearn.impute import SimpleImputer
from sklearn.preprocessing import MinMaxScaler, PolynomialFeatures, StandardScaler

HERE = os.path.dirname(os.path.abspath(__file__))
BLANK_FRACTION = 0.1
BLANK_SEED = 20240607


def write_csv(name, header, rows):
    with open(os.path.join(HERE, name), "w", encoding="utf-8", newline="\n") as f:
        f.write(",".join(header) + "\n")
        for row in rows:
            f.write(",".join("" if (isinstance(v, float) and np.isnan(v)) else repr(v)
                             for v in row) + "\n")


def matrix(a):
    return [[float(v) for v in row] for row in np.asarray(a)]


def vector(a):
    return [float(v) for v in np.asarray(a)]


def case(function, parameters, input_file, columns, **values):
    out = {"function": function, "parameters": parameters, "input": input_file,
           "columns": list(columns)}
    out.update(values)
    return out


def main():
    wine = load_wine()
    wx, wy = wine.data, wine.target
    wnames = list(wine.feature_names)
    write_csv("wine.csv", wnames + ["class"],
              [[float(v) for v in r] + [int(c)] for r, c in zip(wx, wy)])

    rng = np.random.RandomState(BLANK_SEED)
    blanked = wx.copy()
    blanked[rng.uniform(size=wx.shape) < BLANK_FRACTION] = np.nan
    write_csv("wine_blanked.csv", wnames, [[float(v) for v in r] for r in blanked])

    diabetes = load_diabetes()
    dx, dy = diabetes.data, diabetes.target
    dnames = list(diabetes.feature_names)
    write_csv("diabetes.csv", dnames + ["target"],
              [[float(v) for v in r] + [float(t)] for r, t in zip(dx, dy)])

    cases = {}

    s = StandardScaler().fit(wx)
    cases["standardize"] = case("sklearn.preprocessing.StandardScaler", {}, "wine.csv", wnames,
                                mean=vector(s.mean_), scale=vector(s.scale_),
                                output=matrix(s.transform(wx)))

    m = MinMaxScaler().fit(wx)
    cases["minmax"] = case("sklearn.preprocessing.MinMaxScaler", {}, "wine.csv", wnames,
                           data_min=vector(m.data_min_), data_max=vector(m.data_max_),
                           output=matrix(m.transform(wx)))

    p = PCA(n_components=3).fit(wx)
    cases["pca3"] = case("sklearn.decomposition.PCA", {"n_components": 3}, "wine.csv", wnames,
                         mean=vector(p.mean_), components=matrix(p.components_),
                         explained_variance_ratio=vector(p.explained_variance_ratio_),
                         output=matrix(p.transform(wx)))

    standardized = StandardScaler().fit_transform(wx)
    pv = PCA(n_components=0.8).fit(standardized)
    cases["pca_variance"] = case(
        "sklearn.decomposition.PCA", {"n_components": 0.8},
        "wine.csv after sklearn.preprocessing.StandardScaler", wnames,
        n_components=int(pv.n_components_),
        explained_variance_ratio=vector(pv.explained_variance_ratio_),
        output=matrix(pv.transform(standardized)))

    poly_cols = wnames[:4]
    pf = PolynomialFeatures(degree=2).fit(wx[:, :4])
    cases["poly2_bias"] = case("sklearn.preprocessing.PolynomialFeatures",
                               {"degree": 2, "include_bias": True}, "wine.csv", poly_cols,
                               feature_names=list(pf.get_feature_names_out(poly_cols)),
                               output=matrix(pf.transform(wx[:, :4])))
    pf3 = PolynomialFeatures(degree=3, include_bias=False).fit(wx[:, :3])
    cases["poly3"] = case("sklearn.preprocessing.PolynomialFeatures",
                          {"degree": 3, "include_bias": False}, "wine.csv", wnames[:3],
                          feature_names=list(pf3.get_feature_names_out(wnames[:3])),
                          output=matrix(pf3.transform(wx[:, :3])))
    pfi = PolynomialFeatures(degree=3, interaction_only=True, include_bias=False).fit(wx[:, :4])
    cases["poly3_interaction"] = case(
        "sklearn.preprocessing.PolynomialFeatures",
        {"degree": 3, "interaction_only": True, "include_bias": False}, "wine.csv", poly_cols,
        feature_names=list(pfi.get_feature_names_out(poly_cols)),
        output=matrix(pfi.transform(wx[:, :4])))

    vt = VarianceThreshold(threshold=0.1).fit(wx)
    cases["select_variance"] = case("sklearn.feature_selection.VarianceThreshold",
                                    {"threshold": 0.1}, "wine.csv", wnames,
                                    variances=vector(vt.variances_),
                                    support=[bool(b) for b in vt.get_support()])

    kc = SelectKBest(f_classif, k=4).fit(wx, wy)
    cases["select_topk_f_classif"] = case(
        "sklearn.feature_selection.SelectKBest", {"score_func": "f_classif", "k": 4},
        "wine.csv (target: class)", wnames, scores=vector(kc.scores_),
        support=[bool(b) for b in kc.get_support()])

    kr = SelectKBest(f_regression, k=3).fit(dx, dy)
    cases["select_topk_f_regression"] = case(
        "sklearn.feature_selection.SelectKBest", {"score_func": "f_regression", "k": 3},
        "diabetes.csv (target: target)", dnames, scores=vector(kr.scores_),
        support=[bool(b) for b in kr.get_support()])

    r = r_regression(dx, dy)
    kabs = SelectKBest(lambda X, y: np.abs(r_regression(X, y)), k=3).fit(dx, dy)
    cases["select_topk_correlation"] = case(
        "sklearn.feature_selection.r_regression and SelectKBest(|r_regression|)",
        {"k": 3}, "diabetes.csv (target: target)", dnames, correlation=vector(r),
        support=[bool(b) for b in kabs.get_support()])

    for strategy in ("median", "mean", "most_frequent"):
        imp = SimpleImputer(strategy=strategy).fit(blanked)
        cases["impute_" + strategy] = case("sklearn.impute.SimpleImputer", {"strategy": strategy},
                                           "wine_blanked.csv", wnames,
                                           statistics=vector(imp.statistics_),
                                           output=matrix(imp.transform(blanked)))

    reference = {
        "provenance": {
            "script": "tests/testdata/sklearn/make_transform_reference.py",
            "sklearn_version": sklearn.__version__,
            "numpy_version": np.__version__,
            "python_version": platform.python_version(),
            "datasets": {
                "wine.csv": "sklearn.datasets.load_wine() (bundled wine_data.csv)",
                "wine_blanked.csv": "wine.csv features, values blanked where "
                                    "numpy.random.RandomState(%d).uniform() < %g"
                                    % (BLANK_SEED, BLANK_FRACTION),
                "diabetes.csv": "sklearn.datasets.load_diabetes() (bundled diabetes_data_raw.csv.gz,"
                                " scaled=True)",
            },
            "layout": "output and components are row-major lists of rows",
        },
        "cases": cases,
    }
    # Provenance pretty-printed; each case on one line to keep the file small.
    lines = ['{', ' "provenance": ' + json.dumps(reference["provenance"], indent=1,
                                                 sort_keys=True).replace("\n", "\n ") + ",",
             ' "cases": {']
    names = sorted(cases)
    for i, name in enumerate(names):
        lines.append("  %s: %s%s" % (json.dumps(name), json.dumps(cases[name], sort_keys=True),
                                     "," if i + 1 < len(names) else ""))
    lines += [' }', '}']
    with open(os.path.join(HERE, "transform_reference.json"), "w", encoding="utf-8") as f:
        f.write("\n".join(lines) + "\n")


if __name__ == "__main__":
    main()
