"""The endpoint reference at ``/docs``: one self-contained HTML page made from the OpenAPI
schema, with no script and nothing fetched from elsewhere, so it opens on a machine
without internet. Every text from the schema is escaped."""

from __future__ import annotations

import html
import json
from typing import Any

__all__ = ["docs_html"]

_STYLE = """
body{font:15px/1.5 system-ui,sans-serif;margin:2rem auto;max-width:60rem;color:#1d1d1b;
background:#fbfbf8;padding:0 1rem}
h1{font-size:1.6rem}h2{font-size:1.15rem;margin-top:2rem;border-top:1px solid #ddd;
padding-top:1rem}code,pre{font:13px/1.4 ui-monospace,monospace;background:#f0efe9;
border-radius:4px}code{padding:0 .25rem}pre{padding:.6rem .8rem;overflow-x:auto}
.m{display:inline-block;min-width:3.5rem;font-weight:600;color:#0a5a8c}
table{border-collapse:collapse}td,th{text-align:left;padding:.15rem .8rem .15rem 0;
vertical-align:top}.muted{color:#5b5b57}
"""


def _e(value: Any) -> str:
    return html.escape(str(value), quote=True)


def _schema_name(schema: dict[str, Any]) -> str:
    if "$ref" in schema:
        return schema["$ref"].rsplit("/", 1)[-1]
    if "anyOf" in schema:
        return " or ".join(_schema_name(s) for s in schema["anyOf"])
    if schema.get("type") == "array":
        return f"list of {_schema_name(schema.get('items', {}))}"
    return str(schema.get("type", "any"))


def _example(spec: dict[str, Any], ref: str) -> Any:
    name = ref.rsplit("/", 1)[-1]
    schema = spec.get("components", {}).get("schemas", {}).get(name, {})
    examples = schema.get("examples")
    return examples[0] if examples else None


def _operation(spec: dict[str, Any], path: str, method: str, op: dict[str, Any]) -> str:
    parts = [f'<h2><span class="m">{_e(method.upper())}</span> <code>{_e(path)}</code></h2>']
    parts.append(f"<p><b>{_e(op.get('summary', ''))}</b></p>")
    if op.get("description"):
        parts.append(f"<p>{_e(op['description'])}</p>")
    needs_token = bool(op.get("security"))
    parts.append(
        f'<p class="muted">{"Needs a bearer token." if needs_token else "No token needed."}</p>'
    )
    params = op.get("parameters", [])
    if params:
        rows = "".join(
            f"<tr><td><code>{_e(p['name'])}</code></td><td>{_e(p['in'])}</td>"
            f"<td>{_e(_schema_name(p.get('schema', {})))}</td>"
            f"<td>{_e(p.get('description', ''))}</td></tr>"
            for p in params
        )
        parts.append(f"<table><tr><th>parameter</th><th>in</th><th>type</th><th></th></tr>"
                     f"{rows}</table>")  # fmt: skip
    body = op.get("requestBody", {}).get("content", {}).get("application/json", {})
    ref = body.get("schema", {}).get("$ref") or next(
        (s.get("$ref") for s in body.get("schema", {}).get("anyOf", []) if "$ref" in s), None
    )
    example = _example(spec, ref) if ref else None
    token = ' -H "Authorization: Bearer $TOKEN"' if needs_token else ""
    curl = f"curl{token} http://127.0.0.1:8600{path}"
    if method != "get":
        data = json.dumps(example) if example is not None else "{}"
        curl = (
            f"curl -X {method.upper()}{token} -H 'Content-Type: application/json' \\\n"
            f"     -d '{data}' http://127.0.0.1:8600{path}"
        )
    parts.append(f"<pre>{_e(curl)}</pre>")
    answers = ", ".join(
        f"{_e(code)} {_e(r.get('description', ''))}" for code, r in op.get("responses", {}).items()
    )
    parts.append(f'<p class="muted">Answers: {answers}</p>')
    return "\n".join(parts)


def docs_html(spec: dict[str, Any]) -> str:
    """The reference page of an OpenAPI document (see the module notes)."""
    info = spec.get("info", {})
    ops = [
        _operation(spec, path, method, op)
        for path, item in spec.get("paths", {}).items()
        for method, op in item.items()
        if method in ("get", "post", "put", "patch", "delete")
    ]
    description = "".join(
        f"<p>{_e(p)}</p>" for p in str(info.get("description", "")).split("\n\n") if p.strip()
    )
    return (
        "<!doctype html><html lang=en><head><meta charset=utf-8>"
        f"<title>{_e(info.get('title', ''))} — endpoints</title><style>{_STYLE}</style>"
        f"</head><body><h1>{_e(info.get('title', ''))} {_e(info.get('version', ''))}</h1>"
        f"{description}<p>The machine-readable schema (OpenAPI 3.1): "
        '<a href="/openapi.json">/openapi.json</a>.</p>' + "\n".join(ops) + "</body></html>"
    )
