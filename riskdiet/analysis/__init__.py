"""Study-level analyses built on the numeric core.

``study`` runs every scenario of a study; ``results`` holds the documented
result dataclasses; ``predictions`` names the kills; ``grid_check``,
``findings``, ``compare``, ``regimes``, ``maps`` and ``map_reading`` read the
numbers for people.
"""
