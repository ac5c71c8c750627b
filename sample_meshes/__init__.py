"""The bundled sample body and taps (invented demo data, made by scripts/make_samples.py); read through meshpress.bundled."""
