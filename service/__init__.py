"""Meanline preliminary-design calculations of axial compressors and turbines, over HTTP.

The numerical core (:mod:`service.core`) imports no web framework; the application factory
is imported lazily so that ``import service.core`` stays free of Flask.
"""

from service.version import __version__

__all__ = ["__version__", "create_app"]


def create_app(config=None):
    """Create the Flask application (see :func:`service.api.app.create_app`)."""
    from service.api.app import create_app as _create_app

    return _create_app(config)
