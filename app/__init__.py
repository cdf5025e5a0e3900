"""Bandsmith front ends: the command line and the Qt workbench window."""
