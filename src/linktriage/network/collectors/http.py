"""What the HTTP collectors (RESTCONF, Prometheus) share: credentials, TLS, and one GET.

Credentials are references (basic auth or a bearer token); TLS certificates are verified
unless the inventory says otherwise. A GET is retried on timeouts, refused connections and
5xx answers; 401 and 403 are refusals, any other status a bad answer, with the server's
own error message where it gave one (RFC 8040 ``errors``, the Prometheus API ``error``).
"""

from __future__ import annotations

import functools
import json
import ssl
from collections.abc import Callable
from pathlib import Path
from typing import Any

from linktriage.errors import BadAnswerError, DeviceRefusedError
from linktriage.network.collectors.base import Collector, Options, SecretRef, TransientError


class HttpOptions(Options):
    username: str | None = None
    password: SecretRef | None = None
    token: SecretRef | None = None
    verify_tls: bool = True
    ca_file: Path | None = None


@functools.cache
def _tls(ca_file: str | None) -> ssl.SSLContext:
    """A verifying TLS context, built once per CA bundle: loading one takes tens of
    milliseconds, too long to repeat for each of hundreds of devices in a sweep."""
    import certifi

    return ssl.create_default_context(cafile=ca_file or certifi.where())


def _client(options: HttpOptions, timeout_s: float, accept: str) -> Any:
    """An httpx client with the entry's credentials and TLS settings."""
    import httpx

    headers = {"Accept": accept}
    auth = None
    if options.token is not None:
        headers["Authorization"] = f"Bearer {options.token.reveal()}"
    elif options.username is not None:
        secret = options.password.reveal() if options.password else ""
        auth = httpx.BasicAuth(options.username, secret)
    verify: ssl.SSLContext | bool = False
    if options.verify_tls:
        verify = _tls(str(options.ca_file) if options.ca_file else None)
    return httpx.AsyncClient(headers=headers, auth=auth, verify=verify, timeout=timeout_s)


def _server_message(body: bytes) -> str:
    """The error text a server put in its answer, if it used a shape we know."""
    try:
        document = json.loads(body)
    except ValueError:
        return ""
    if not isinstance(document, dict):
        return ""
    if isinstance(document.get("error"), str):  # the Prometheus HTTP API
        return str(document["error"])
    errors = document.get("ietf-restconf:errors", document.get("errors"))  # RFC 8040 7.1
    if isinstance(errors, dict) and isinstance(errors.get("error"), list) and errors["error"]:
        first = errors["error"][0]
        if isinstance(first, dict):
            return str(first.get("error-message", first.get("error-tag", "")))
    return ""


class HttpSession:
    """One collector's HTTP connections, opened at the first request and kept until close."""

    def __init__(self, collector: Collector[Any], options: HttpOptions, accept: str) -> None:
        self.collector = collector
        self.options = options
        self.accept = accept
        self._client: Any = None

    async def close(self) -> None:
        if self._client is not None:
            await self._client.aclose()
            self._client = None

    async def get_json(
        self,
        url: str,
        params: dict[str, str] | None = None,
        decode: Callable[[bytes], Any] = json.loads,
    ) -> Any:
        """GET ``url`` and parse its JSON (with ``decode``: the Prometheus collector's is
        typed), with the collector's timeout and retries."""
        if self._client is None:
            timeout_s = self.collector.target.timeout_s
            self._client = _client(self.options, timeout_s, self.accept)
        return await _get_json(self.collector, self._client, url, params, decode)


async def _get_json(
    collector: Collector[Any],
    client: Any,
    url: str,
    params: dict[str, str] | None,
    decode: Callable[[bytes], Any],
) -> Any:
    import httpx

    async def attempt() -> Any:
        try:
            response = await client.get(url, params=params)
        except httpx.TimeoutException as exc:
            raise TimeoutError from exc
        except httpx.TransportError as exc:
            raise TransientError(f"cannot connect to {url}: {exc}") from exc
        status = response.status_code
        if status in (401, 403):
            raise collector.error(DeviceRefusedError, f"refused the credentials ({status})")
        if status >= 500:  # a busy or failing server: worth another try
            raise TransientError(f"answered {status} for {url}")
        if status != 200:
            said = _server_message(response.content)
            detail = f": {said}" if said else ""
            raise collector.error(BadAnswerError, f"answered {status} for {url}{detail}")
        try:
            return decode(response.content)
        except ValueError as exc:  # json's and msgspec's decoding errors are ValueErrors
            raise collector.error(
                BadAnswerError,
                f"answered with something not JSON, or not of the shape expected: {exc}",
            ) from exc

    return await collector.retrying(attempt, f"GET {url}")
