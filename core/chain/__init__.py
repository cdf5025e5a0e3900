"""Higher-order band-pass filters as chains of second-order stages."""
