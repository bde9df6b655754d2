"""Benchmarks (scripts, never tests): ``python -m bot.bench.engine``, ``.load``, ``.adapter``."""
