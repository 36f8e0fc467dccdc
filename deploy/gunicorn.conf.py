"""Gunicorn settings for ``gunicorn -c deploy/gunicorn.conf.py``.

The settings live in service/gunicorn_conf.py, which `python -m service serve` also loads, so
both ways of starting the server share one source. Run from the repository root (or with the
package installed), e.g. ``gunicorn -c deploy/gunicorn.conf.py``: the module sets ``wsgi_app``.
"""

from service.gunicorn_conf import *  # noqa: F401,F403
