"""The service with a deliberate delay, for the time-limit drill only.

A request with the header ``X-Drill-Delay: <seconds>`` waits that long (at most 30 s) inside the
service's request handling, where a long calculation would spend its time, so that a request
longer than MEANLINE_TIMEOUT can be made on purpose whatever the speed of the machine. Served by
gunicorn with the service's own settings:

    python -m gunicorn -c python:service.gunicorn_conf tests.drills.slow_app:app
"""

import time

from flask import request

from service import create_app

app = create_app()


@app.before_request
def _delay():
    delay = request.headers.get("X-Drill-Delay", "")
    if delay:
        time.sleep(min(float(delay), 30.0))
