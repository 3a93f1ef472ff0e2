"""Plain ASGI middleware of the service, one job each, composed in `service.app.create_app`.

From the outside in: `RequestId` (keep or make the request's id, echo it), `AccessRecord` (the
access log line and the metrics of every request), `BodyLimit` (refuse a body over the limit before
anything reads it), `ExpandShortcut` (answer GET /v1/expand with the route's own parser and
responder, without the framework's routing). Plain ASGI, not a framework's middleware class:
they run on every request and must stay cheap.
"""
