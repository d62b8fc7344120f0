"""Browser scripts that a recorded notebook page carries with it (standard library only).

A design record (``python -m dampline record``) is one HTML file that shows its bqplot
figures with no kernel and no network. Two of the scripts it inlines come from the npm
registry and are fetched once into a per-user cache, never committed to the repository:

* ``requirejs`` 2.3.8: ``package/require.js`` (the AMD loader);
* ``@jupyter-widgets/html-manager`` 1.0.15: ``package/dist/embed-amd.js`` (the widget
  manager with ``@jupyter-widgets/base`` and ``controls``) and the two Font Awesome 5
  Free web fonts its CSS names (solid 900 and regular 400, ``.woff2``), which draw the
  icons of buttons such as play and stop.

Versions are pinned exactly and every tarball is checked against the registry's
``sha512`` integrity string recorded below before anything is unpacked.
``@jupyter-widgets/html-manager`` 1.0.x is the manager for ipywidgets 8 (widget-state
schema 2); 1.0.15 depends on the same ``@jupyter-widgets/base`` ^6.0.12 and ``controls``
^5.0.13 as the JupyterLab manager of ipywidgets 8.1.9 (``jupyterlab_widgets`` 3.0.17).
The bqplot and bqscales front ends are not fetched: the Python wheels install them
under ``<sys.prefix>/share/jupyter/nbextensions/``.

Cache folder: ``$DAMPLINE_ASSETS`` if set, else ``$XDG_CACHE_HOME/dampline/assets``, else
``~/.cache/dampline/assets``. Registry: ``$npm_config_registry`` (npm's own variable) if
set, else ``https://registry.npmjs.org``.

Fetch them with ``python -m dampline assets``. This module imports nothing outside the
standard library, so ``python3 dampline/assets.py`` also works before the package and
its dependencies are installed (CI runs it that way).
"""

from __future__ import annotations

import base64
import hashlib
import io
import os
import secrets
import sys
import tarfile
import urllib.error
import urllib.request
from dataclasses import dataclass
from pathlib import Path

__all__ = ["NpmAsset", "NPM_ASSETS", "AssetError", "cache_dir", "fetch_assets", "asset_path",
           "missing_assets"]

DEFAULT_REGISTRY = "https://registry.npmjs.org"


@dataclass(frozen=True)
class NpmAsset:
    """One file out of one pinned npm package tarball."""

    package: str       #: npm package name, e.g. ``@jupyter-widgets/html-manager``
    version: str       #: exact version
    member: str        #: path of the file inside the tarball
    integrity: str     #: the registry's ``dist.integrity`` (``sha512-<base64>``)

    @property
    def folder(self) -> str:
        """Cache sub-folder: package name without scope, plus version."""
        return f"{self.package.rsplit('/', 1)[-1]}-{self.version}"

    @property
    def filename(self) -> str:
        return self.member.rsplit("/", 1)[-1]

    def tarball_url(self, registry: str) -> str:
        bare = self.package.rsplit("/", 1)[-1]
        return f"{registry.rstrip('/')}/{self.package}/-/{bare}-{self.version}.tgz"


_HTML_MANAGER_SRI = (
    "sha512-5thBIV6ymNgmPVOHvzx+gGy8ZSKmSazhtGw4/c4xJDVzRhG9PTeQsRjF3FUTopvFi//SABeNz1yp47bCrJ3CQA==")

#: the pinned npm files, by the role they play in a recorded page
NPM_ASSETS: dict[str, NpmAsset] = {
    "requirejs": NpmAsset(
        "requirejs", "2.3.8", "package/require.js",
        "sha512-7/cTSLOdYkNBNJcDMWf+luFvMriVm7eYxp4BcFCsAX0wF421Vyce5SXP17c+Jd5otXKGNehIonFlyQXSowL6Mw==",
    ),
    "html-manager": NpmAsset(
        "@jupyter-widgets/html-manager", "1.0.15", "package/dist/embed-amd.js", _HTML_MANAGER_SRI,
    ),
    # the hashed names are the ones embed-amd.js 1.0.15 gives "Font Awesome 5 Free"
    "font-solid-900": NpmAsset(
        "@jupyter-widgets/html-manager", "1.0.15", "package/dist/1551f4f60c37af51121f.woff2",
        _HTML_MANAGER_SRI,
    ),
    "font-regular-400": NpmAsset(
        "@jupyter-widgets/html-manager", "1.0.15", "package/dist/7a3337626410ca2f4071.woff2",
        _HTML_MANAGER_SRI,
    ),
}


class AssetError(RuntimeError):
    """The browser scripts a record needs are not in the cache and could not be fetched."""


def cache_dir() -> Path:
    """The folder that holds the fetched npm files (see the module docstring)."""
    explicit = os.environ.get("DAMPLINE_ASSETS")
    if explicit:
        return Path(explicit).expanduser()
    xdg = os.environ.get("XDG_CACHE_HOME")
    base = Path(xdg).expanduser() if xdg else Path.home() / ".cache"
    return base / "dampline" / "assets"


def asset_path(role: str, cache: Path | None = None) -> Path:
    """Where the file of ``NPM_ASSETS[role]`` lives in the cache (it may not exist yet)."""
    a = NPM_ASSETS[role]
    return (cache or cache_dir()) / a.folder / a.filename


def missing_assets(cache: Path | None = None) -> list[str]:
    """Roles of the pinned files not yet in the cache."""
    return [r for r in NPM_ASSETS if not asset_path(r, cache).is_file()]


def _registry() -> str:
    return (os.environ.get("npm_config_registry") or os.environ.get("NPM_CONFIG_REGISTRY")
            or DEFAULT_REGISTRY)


def _check_integrity(data: bytes, asset: NpmAsset) -> None:
    algo, _, expected = asset.integrity.partition("-")
    got = base64.b64encode(hashlib.new(algo, data).digest()).decode()
    if got != expected:
        raise AssetError(
            f"{asset.package}@{asset.version}: tarball {algo} is {got}, expected {expected} "
            "(the download is corrupt or the registry served something else)")


def _write_atomic(path: Path, data: bytes) -> None:
    # a temporary name beside the target, then a rename: an interrupted fetch never
    # leaves a truncated script that a later record would inline
    path.parent.mkdir(parents=True, exist_ok=True)
    tmp = path.parent / f".{path.name}.{secrets.token_hex(6)}.tmp"
    try:
        with open(tmp, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, path)
    except BaseException:
        tmp.unlink(missing_ok=True)
        raise


def _download(url: str, timeout: float) -> bytes:
    req = urllib.request.Request(url, headers={"User-Agent": "dampline-assets"})
    with urllib.request.urlopen(req, timeout=timeout) as resp:
        return resp.read()


def fetch_assets(cache: Path | None = None, *, force: bool = False,
                 timeout: float = 60.0) -> Path:
    """Download the pinned npm files into the cache (only those missing, unless ``force``).

    Each tarball is checked against its pinned ``sha512`` integrity before the one file
    needed is taken out of it and written atomically. Returns the cache folder.

    Raises
    ------
    AssetError
        The registry could not be reached or served a tarball that does not match; the
        message names the cache folder and the command that fills it.
    """
    cache = Path(cache) if cache is not None else cache_dir()
    registry = _registry()
    tarballs: dict[str, bytes] = {}   # several files come out of one tarball
    for role, asset in NPM_ASSETS.items():
        target = asset_path(role, cache)
        if target.is_file() and not force:
            continue
        url = asset.tarball_url(registry)
        if url not in tarballs:
            try:
                data = _download(url, timeout)
            except (urllib.error.URLError, OSError, TimeoutError) as exc:
                raise AssetError(
                    f"could not fetch {asset.package}@{asset.version} from {url}: {exc}. "
                    f"A record needs it in {cache}; with network access run "
                    f"`python -m dampline assets` (or set DAMPLINE_ASSETS to a folder that "
                    f"holds {asset.folder}/{asset.filename})") from exc
            _check_integrity(data, asset)
            tarballs[url] = data
        data = tarballs[url]
        with tarfile.open(fileobj=io.BytesIO(data), mode="r:gz") as tar:
            try:
                member = tar.getmember(asset.member)
            except KeyError:
                raise AssetError(f"{asset.package}@{asset.version}: no {asset.member} in the tarball")
            fh = tar.extractfile(member)
            if fh is None:
                raise AssetError(f"{asset.package}@{asset.version}: {asset.member} is not a file")
            _write_atomic(target, fh.read())
    return cache


def main(argv: list[str] | None = None) -> int:
    """``python3 dampline/assets.py [--force]``: fetch the pinned files, print where."""
    args = sys.argv[1:] if argv is None else argv
    try:
        cache = fetch_assets(force="--force" in args)
    except AssetError as exc:
        print(f"dampline assets: {exc}", file=sys.stderr)
        return 3
    for role in NPM_ASSETS:
        a = NPM_ASSETS[role]
        print(f"{a.package}@{a.version}: {asset_path(role, cache)}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
