"""Synthesis: from a brief to the Pareto set of buildable designs.

``space`` builds the search space of a brief (which choices are open, among
which parts), ``score`` turns batch figures into parts, cost, objectives and
constraints, ``problem`` evaluates whole populations for pymoo, ``run`` is the
thin runner (search, verification, picks, files).
"""
