"""Shared plumbing of the core: the bad-input error, value notation, IEC 60063 series, atomic files, cautions."""
