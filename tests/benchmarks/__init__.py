"""Performance benchmark of the service: ``python -m tests.benchmarks``.

Not part of the test run (no ``test_*`` modules here, and no timing assertion anywhere in the
tests). It starts the service and a minimal echo app under gunicorn on loopback with the
production settings (service/gunicorn_conf.py), measures, prints each figure as the median of
several repetitions with its spread, stops the servers and exits non-zero if a target is
missed, so that it can be run as a gate. See the README's performance section.
"""
