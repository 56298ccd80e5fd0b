"""The numeric core: pure numpy/scipy, no study files, no report, no command line.

``grid`` (inputs in grid units and the outcomes of one day), ``choice`` (which
attack set is chosen), ``solver`` (policy iteration and backward induction),
``batch`` (many cells of equal shape at once), ``chain`` (the Markov chain
under the optimal policy), ``cohort`` (the released animals over a horizon),
``classic`` (the classic prey model) and ``stats`` (ranges, sensitivity,
likelihoods and tests). Nothing here imports pandas, openpyxl, reportlab,
matplotlib or typer.
"""
