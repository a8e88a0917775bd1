"""Reading concord's JSON report (README "JSON report") from a file or a server.

load_report() gives plain dicts and lists, with null as None, exactly as the
JSON has them; it needs nothing beyond the standard library.
"""

import json
import os
import urllib.parse
import urllib.request

from .http_sink import PermanentError, base_url, open_url, tls_context, token_from

FORMATS = ("json", "html", "text")
WINDOWS = ("day", "week", "all")


def _is_url(source):
    return isinstance(source, str) and source.split(":", 1)[0].lower() in ("http", "https")


def load_report(source, token=None, timeout=60.0, cafile=None):
    """The JSON report in `source` (a file path, or an http(s) URL of `concord
    serve`'s report endpoint; token from the argument or $CONCORD_TOKEN).

    Raises OSError for an unreadable file, SendError (http_sink) for a server
    that refuses or does not answer, ValueError when the text is not a report.
    """
    if _is_url(source):
        text = _get(source, token, timeout, cafile)
        where = source
    else:
        where = os.fspath(source)
        with open(where, "rb") as f:
            text = f.read()
    try:
        report = json.loads(text)
    except ValueError as e:
        raise ValueError("%s: not JSON (%s); was the report written with --format json?"
                         % (where, e)) from None
    if not isinstance(report, dict) or not isinstance(report.get("windows"), list):
        raise ValueError("%s: JSON without a \"windows\" list; not a concord report" % where)
    return report


def report_url(server, model, frm=None, to=None, by=None, format="json"):
    """The URL of a model's report on a concord server; dates are YYYY-MM-DD."""
    if by is not None and by not in WINDOWS:
        raise ValueError("by must be one of %s, not %r" % (", ".join(WINDOWS), by))
    if format not in FORMATS:
        raise ValueError("format must be one of %s, not %r" % (", ".join(FORMATS), format))
    query = [("format", format)]
    for key, value in (("from", frm), ("to", to), ("by", by)):
        if value is not None:
            query.append((key, str(value)))
    return "%s/v1/models/%s/report?%s" % (base_url(server), urllib.parse.quote(model, safe=""),
                                          urllib.parse.urlencode(query))


def fetch_report(server, model, token=None, frm=None, to=None, by=None, timeout=60.0,
                 cafile=None):
    """A model's JSON report from a concord server, as dicts (see report_url)."""
    return load_report(report_url(server, model, frm, to, by), token, timeout, cafile)


def list_models(server, token=None, timeout=60.0, cafile=None):
    """The server's models: a list of {"name", "members", "classes"} dicts."""
    body = _get(base_url(server) + "/v1/models", token, timeout, cafile)
    try:
        return json.loads(body)["models"]
    except (ValueError, KeyError, TypeError):
        raise PermanentError("%s/v1/models: answer is not a model list" % server) from None


def _get(url, token, timeout, cafile=None):
    headers = {"Accept": "application/json"}
    token = token_from(token)
    if token:
        headers["Authorization"] = "Bearer " + token
    request = urllib.request.Request(url, headers=headers, method="GET")
    with open_url(request, timeout, tls_context(cafile)) as response:
        return response.read()
