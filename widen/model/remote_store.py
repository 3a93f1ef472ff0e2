"""A store read from a URL: how a replica on another host gets the trainer's bundles.

The trainer publishes into a store folder as always; that folder is served as it is by any static
web server or object-store endpoint (`https://...`), or reached through fsspec (`file://`, and any
scheme a user's own fsspec plugin adds). A replica given the URL keeps a local mirror of the store
(an ordinary store folder) and serves from it:

1. it reads the remote `CURRENT` (over http(s) with `If-None-Match` / `If-Modified-Since`, so an
   unchanged pointer costs a 304 and no body);
2. for a version it has not mirrored, it fetches the bundle's `manifest.json`, then every file the
   manifest lists, each into a scratch folder while its sha256 is computed, and compares it with the
   manifest; the bundle is then checked as a whole (`verify_folder`) and renamed into the mirror;
3. only then does the mirror's own `CURRENT` move, and the service swaps the bundle in as it does for
   a local store.

Any failure (404, 5xx, a timeout, a truncated body, a flipped byte, a manifest that does not match)
leaves the mirror, and so the serving bundle, as it was; it is logged and counted, and the next
try waits longer (doubling from `backoff` seconds up to `max_backoff`). Mirrored bundles other than
the newest `keep` (and the current one) are removed.
"""

from __future__ import annotations

import hashlib
import json
import logging
import re
import shutil
import time
from pathlib import Path, PurePosixPath
from typing import Any

from widen.errors import BundleError
from widen.model.bundle import verify_folder
from widen.model.store import Store

__all__ = ["StoreMirror", "is_url", "masked", "mirror_folder"]

log = logging.getLogger(__name__)

_CHUNK = 1 << 20


def is_url(location: str | Path) -> bool:
    """Whether a store location is a URL (scheme://...) rather than a local folder."""
    return re.match(r"^[a-zA-Z][a-zA-Z0-9+.-]*://", str(location)) is not None


def mirror_folder(settings: Any) -> Path:
    """Where a store given by URL is mirrored: `settings.mirror`, else a folder under the system's
    temporary folder named after the URL (so two replicas of different stores never share one)."""
    if settings.mirror is not None:
        return Path(settings.mirror)
    import tempfile

    name = hashlib.sha256(str(settings.store).encode("utf-8")).hexdigest()[:16]
    return Path(tempfile.gettempdir()) / f"widen-mirror-{name}"


def masked(url: str) -> str:
    """The URL with any user:password replaced, for logs and messages."""
    return re.sub(r"://[^/@]*@", "://***@", url)


def _settled(modified: str | None, date: str | None) -> bool:
    """Whether a Last-Modified time can tell a later change apart: it has a one-second resolution, so
    only one at least a second before the response's Date is (RFC 9110, 8.8.2.2, when a
    Last-Modified date is strong); a file changed again within that second would otherwise look
    unchanged to every later conditional request."""
    if not modified or not date:
        return False
    from email.utils import parsedate_to_datetime

    try:
        return (parsedate_to_datetime(date) - parsedate_to_datetime(modified)).total_seconds() >= 1
    except (TypeError, ValueError):
        return False


class _Fetch:
    """Reading files of the remote store: httpx for http(s) (conditional requests, timeouts), fsspec
    for every other scheme."""

    def __init__(self, url: str, timeout: float) -> None:
        self.url = url.rstrip("/")
        self.timeout = timeout
        self.http = self.url.startswith(("http://", "https://"))
        self._validators: dict[str, str] = {}
        self._last: dict[str, bytes] = {}
        if self.http:
            import httpx

            self.client = httpx.Client(timeout=timeout, follow_redirects=True)
        else:
            import fsspec

            self.fs, self.root = fsspec.core.url_to_fs(self.url)

    def close(self) -> None:
        if self.http:
            self.client.close()

    def small(self, name: str, conditional: bool = False) -> bytes | None:
        """A small file's bytes; None when it does not exist. With `conditional`, an unchanged file
        is not sent again (the last bytes are returned)."""
        if not self.http:
            try:
                return bytes(self.fs.cat_file(f"{self.root}/{name}"))
            except FileNotFoundError:
                return None
        headers = {}
        if conditional and name in self._validators:
            kind, value = self._validators[name].split(":", 1)
            headers["If-None-Match" if kind == "etag" else "If-Modified-Since"] = value
        got = self.client.get(f"{self.url}/{name}", headers=headers)
        if got.status_code == 304 and name in self._last:
            return self._last[name]
        if got.status_code == 404:
            return None
        got.raise_for_status()
        if conditional:
            self._validators.pop(name, None)
            if "etag" in got.headers:
                self._validators[name] = "etag:" + got.headers["etag"]
            elif _settled(got.headers.get("last-modified"), got.headers.get("date")):
                self._validators[name] = "modified:" + got.headers["last-modified"]
            self._last[name] = got.content
        return got.content

    def to_file(self, name: str, target: Path) -> str:
        """Copy a file of the remote store to `target`, streaming; returns its sha256."""
        digest = hashlib.sha256()
        target.parent.mkdir(parents=True, exist_ok=True)
        with target.open("wb") as out:
            if self.http:
                with self.client.stream("GET", f"{self.url}/{name}") as got:
                    got.raise_for_status()
                    for chunk in got.iter_bytes(_CHUNK):
                        digest.update(chunk)
                        out.write(chunk)
            else:
                with self.fs.open(f"{self.root}/{name}", "rb") as src:
                    while chunk := src.read(_CHUNK):
                        digest.update(chunk)
                        out.write(chunk)
        return digest.hexdigest()


class StoreMirror:
    """Keeps `local`, an ordinary store folder, in step with the store at `url`. Parameters: the URL;
    the local folder; `timeout` for one request; `keep`, mirrored bundles kept besides the current
    one; `backoff` and `max_backoff`, seconds to wait after a failure (doubling)."""

    def __init__(
        self,
        url: str,
        local: Path,
        timeout: float = 10.0,
        keep: int = 2,
        backoff: float = 1.0,
        max_backoff: float = 60.0,
    ) -> None:
        self.url = url
        self.store = Store(local)
        self.keep = keep
        self.backoff, self.max_backoff = backoff, max_backoff
        self._fetch = _Fetch(url, timeout)
        self.failures = 0  # in a row; 0 after a success
        self.refusals = 0  # every failure since start
        self.last_error: str | None = None
        self._next_try = 0.0

    def close(self) -> None:
        self._fetch.close()

    def sync(self) -> str:
        """One step: `unchanged`, `mirrored` (the mirror's CURRENT moved), `none` (the remote store has
        no current bundle), `waiting` (backing off after a failure) or `failed`."""
        now = time.monotonic()
        if now < self._next_try:
            return "waiting"
        try:
            raw = self._fetch.small("CURRENT", conditional=True)
            version = raw.decode("utf-8").strip() if raw is not None else ""
            if not version:
                return "none"
            if self.store.current_version() == version:
                result = "unchanged"
            else:
                if version not in self.store.versions() or self.store.verify(version):
                    self._mirror(version)
                self.store.set_current(version, by="mirror", note=f"from {masked(self.url)}")
                self.store.prune(self.keep)
                result = "mirrored"
        except Exception as exc:  # any failure: keep what serves, say why, try again later
            self.failures += 1
            self.refusals += 1
            self.last_error = f"{type(exc).__name__}: {exc}"
            wait = min(self.backoff * 2 ** (self.failures - 1), self.max_backoff)
            self._next_try = now + wait
            log.error("store %s: %s; next try in %.1f s", masked(self.url), self.last_error, wait)
            return "failed"
        self.failures = 0
        self.last_error = None
        return result

    def _mirror(self, version: str) -> None:
        if not version or "/" in version or version.startswith("."):
            raise BundleError(f"the remote CURRENT names no bundle version: {version!r}")
        scratch = self.store.work / f"mirror-{version}"
        shutil.rmtree(scratch, ignore_errors=True)
        scratch.mkdir(parents=True)
        try:
            raw = self._fetch.small(f"bundles/{version}/manifest.json")
            if raw is None:
                raise BundleError(f"bundle {version} has no manifest.json in the remote store")
            manifest: dict[str, Any] = json.loads(raw)
            files = manifest.get("files")
            if not isinstance(files, dict) or not files:
                raise BundleError(f"bundle {version}: the manifest lists no files")
            for name, expected in files.items():
                relative = PurePosixPath(name)
                if relative.is_absolute() or ".." in relative.parts:
                    raise BundleError(f"bundle {version}: the manifest names a file outside the bundle: {name}")
                got = self._fetch.to_file(f"bundles/{version}/{name}", scratch / relative)
                if got != expected:
                    raise BundleError(f"bundle {version}: {name} does not match its sha256 in the manifest")
            (scratch / "manifest.json").write_bytes(raw)
            problems = verify_folder(scratch)
            if problems:
                raise BundleError("; ".join(problems))
            shutil.rmtree(self.store.bundle_dir(version), ignore_errors=True)  # a damaged earlier copy
            self.store.publish(scratch, version)
        finally:
            shutil.rmtree(scratch, ignore_errors=True)
