"""The service's version: the OpenAPI document's and the package's."""

__version__ = "0.1.0"
