"""Gunicorn settings for the meanline service, read from the environment.

`python -m service serve` and deploy/gunicorn.conf.py both load this module, so a single
host, a container and a cluster run with the same settings.
"""

import os

bind = f"{os.environ.get('MEANLINE_HOST', '127.0.0.1')}:{os.environ.get('MEANLINE_PORT', '8080')}"
workers = int(os.environ.get("MEANLINE_WORKERS", os.cpu_count() or 1))
timeout = int(os.environ.get("MEANLINE_TIMEOUT", "30"))
