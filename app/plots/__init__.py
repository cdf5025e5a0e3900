"""Plots built from core results: curve data (no Qt, :mod:`bandsmith.app.plots.curves`) and offscreen
images of them (:mod:`bandsmith.app.plots.render`) for the report and the image exports."""
