"""Plots built from core results: curve data (no Qt, :mod:`app.plots.curves`) and offscreen
images of them (:mod:`app.plots.render`) for the report and the image exports."""
