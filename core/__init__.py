"""Bandsmith analysis core: netlists, nodal analysis, figures, design and spread.

Pure Python over numpy and scipy; it never imports Qt.
"""
