"""Fixtures of the API tests: the application with its default settings and a test client."""

import pytest

from service import create_app


@pytest.fixture(scope="module")
def app():
    return create_app()


@pytest.fixture(scope="module")
def client(app):
    return app.test_client()
