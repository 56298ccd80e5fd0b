"""Statistical building blocks of the numeric core: pure numpy and scipy.

Nothing here knows about studies, files or reports. Each module holds one idea:

* :mod:`riskdiet.core.stats.ranges` -- distributions of an input's range and Latin
  hypercube draws;
* :mod:`riskdiet.core.stats.sensitivity` -- Sobol indices with bootstrap intervals,
  one-at-a-time elasticities;
* :mod:`riskdiet.core.stats.probability_words` -- words for probabilities and paired
  better/same/worse comparisons;
* :mod:`riskdiet.core.stats.composition_likelihood` -- likelihood of diet records
  (multinomial, Dirichlet-multinomial, Poisson rate rows) and AICc;
* :mod:`riskdiet.core.stats.goodness_of_fit` -- G-tests (fit and homogeneity) with
  Williams' correction, parametric bootstrap p-values;
* :mod:`riskdiet.core.stats.profile_interval` -- profile-likelihood intervals as a
  union of pieces.

No function returns NaN or infinity: undefined results are ``None`` (documented
per function) or an error of :mod:`riskdiet.errors`.
"""
