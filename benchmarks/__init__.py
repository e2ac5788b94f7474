"""Speed benchmarks: ``make bench`` runs every ``bench_*.py`` module here."""
