"""Verdicts: which candidate to build (``buildable``, ``marginal``, ``not buildable``), ranked."""
