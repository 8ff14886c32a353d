"""The HTTP service: talkthemes for other systems, as a token-protected JSON API.

A face over the public API (:class:`talkthemes.Workspace`), like the command line and the
viewer: it parses, checks who asks, answers; the work and the workspace lock happen in the
API. ``talkthemes serve`` starts it (``docs/service.md``).

- :mod:`~talkthemes.service.app` — :func:`~talkthemes.service.app.create_app`, the FastAPI
  application of one workspace;
- :mod:`~talkthemes.service.state` — what the routes share: the workspace, the settings,
  the jobs, the writer queue;
- :mod:`~talkthemes.service.auth` — bearer tokens (RFC 6750) and scopes;
- :mod:`~talkthemes.service.errors` — the one error shape and the status of each error;
- :mod:`~talkthemes.service.limits` — the request body limit;
- :mod:`~talkthemes.service.jobs` — refreshes as background jobs in their own process;
- :mod:`~talkthemes.service.models`, :mod:`~talkthemes.service.responses` — the request
  and response bodies (the OpenAPI schema);
- :mod:`~talkthemes.service.routes` — the endpoints, one module per area;
- :mod:`~talkthemes.service.docs_page` — the endpoint reference at ``/docs``, offline;
- :mod:`~talkthemes.service.run` — uvicorn, the bind address checks, shutdown.

This package imports nothing at first: :mod:`~talkthemes.service.jobs` runs in a fresh
process for each refresh and should not pay for FastAPI there.
"""
