"""The bundled example test (invented data, made by scripts/make_example.py); read through meshpress.bundled."""
