"""The framework limit: a Flask endpoint that only parses a JSON body and writes it back.

Run under gunicorn with the service's own settings, its throughput is the most any Flask
endpoint can reach on the same server, so the service's single-case throughput is quoted as
a fraction of it.
"""

import orjson
from flask import Flask, Response, request

app = Flask(__name__)


@app.post("/echo")
def echo():
    return Response(orjson.dumps(orjson.loads(request.get_data())), mimetype="application/json")


@app.get("/healthz")
def healthz():
    return Response(b'{"status":"ok"}', mimetype="application/json")
