"""A manifest's branding as inputs: its template folder and its logo, resolved, checked and hashed.

``project.branding.templates`` names a folder of templates (partials, ``colours.css``,
``style.css``) and ``project.branding.logo`` an image (PNG, JPEG or SVG), both relative to the
manifest's folder. Every file of the folder and the logo are inputs of the run: results.json lists
them (role ``brand``) with their SHA-256 beside the manifest and the data, so a dossier records
which branding produced it, ``reportgen verify`` re-hashes them and a bundle carries them.

Template folders are searched in this order: every ``--templates DIR`` in the order given, then the
manifest's brand folder, then reportgen's packaged templates (reachable as ``default/NAME``).
"""

from __future__ import annotations

import base64
import os
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from reportgen.errors import InvalidValueError, Location, LogoUnusableError, TemplateFolderMissingError
from reportgen.manifest import Manifest
from reportgen.provenance import sha256_bytes

#: The role of brand files in results.json's ``inputs``.
BRAND_ROLE = "brand"
#: The input name of the logo.
LOGO_INPUT = "brand:logo"
#: Input names of the brand folder's files start with this, followed by the file's path in the folder.
TEMPLATE_INPUT_PREFIX = "brand:templates/"
#: Version-control folders inside a brand folder: their files are history, not branding, and are not hashed.
VERSION_CONTROL_FOLDERS = frozenset({".git", ".hg", ".svn"})
#: The largest logo reportgen embeds (it is inlined in the HTML page as a data: URL).
LOGO_LIMIT = 2_000_000

_XML_PROLOGUE = re.compile(r"^\ufeff?\s*(<\?xml[^>]*\?>\s*)?")


@dataclass(frozen=True, slots=True)
class BrandFile:
    """One brand input: its input name, resolved path, path as the manifest names it, and bytes."""

    name: str
    path: Path
    relative_path: str
    data: bytes


def brand_folder(manifest: Manifest) -> Path | None:
    """The manifest's brand template folder (resolved), or None without one.

    Raises :class:`TemplateFolderMissingError` at the manifest's line when it is not a folder.
    """
    branding = manifest.spec.project.branding
    if branding is None or branding.templates is None:
        return None
    folder = manifest.base_dir / branding.templates
    if not folder.is_dir():
        raise TemplateFolderMissingError(location=manifest.locate("project", "branding", "templates"), path=folder,
                                         hint="name a folder relative to the manifest's folder, e.g. "
                                              "'templates: brand', or remove the key")
    resolved = folder.resolve()
    if manifest.path.is_relative_to(resolved):
        raise InvalidValueError(location=manifest.locate("project", "branding", "templates"),
                                problem=f"the brand folder {resolved} holds the manifest; every file in it is hashed "
                                        "as an input, so it would take in the data and the outputs too",
                                remedy="keep the brand templates in a folder of their own, e.g. 'templates: brand'")
    return resolved


def template_folders(manifest: Manifest, command_line: Sequence[Path] = ()) -> tuple[Path, ...]:
    """The user template folders in search order: ``--templates`` folders first, then the brand folder."""
    folder = brand_folder(manifest)
    return (*(Path(item) for item in command_line), *((folder,) if folder is not None else ()))


def logo_media_type(data: bytes) -> str | None:
    """The media type of a logo's bytes (PNG, JPEG or a plain SVG drawing), or None for anything else."""
    from reportgen.render.html import svg_problem

    if data.startswith(b"\x89PNG\r\n\x1a\n"):
        return "image/png"
    if data.startswith(b"\xff\xd8\xff"):
        return "image/jpeg"
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError:
        return None
    drawing = _XML_PROLOGUE.sub("", text, count=1).strip()
    if drawing.startswith("<svg") and svg_problem(drawing) is None:
        return "image/svg+xml"
    return None


def _read_logo(manifest: Manifest) -> BrandFile | None:
    branding = manifest.spec.project.branding
    if branding is None or branding.logo is None:
        return None
    where = manifest.locate("project", "branding", "logo")
    path = manifest.base_dir / branding.logo
    try:
        data = path.read_bytes()
    except OSError as error:
        reason = "it is a folder" if path.is_dir() else (error.strerror or str(error)).lower()
        raise LogoUnusableError(location=where, path=path, problem=reason,
                                remedy="name an image file relative to the manifest's folder") from None
    if len(data) > LOGO_LIMIT:
        raise LogoUnusableError(location=where, path=path,
                                problem=f"it has {len(data):,} bytes, more than the {LOGO_LIMIT:,} a logo may have",
                                remedy="use a smaller image; the logo is embedded in the HTML page")
    if logo_media_type(data) is None:
        raise LogoUnusableError(location=where, path=path,
                                problem="it is not a PNG, a JPEG or a plain SVG drawing (no scripts, event "
                                        "handlers, style elements or links to other files)",
                                remedy="save the logo as PNG, JPEG or plain SVG")
    return BrandFile(name=LOGO_INPUT, path=path.resolve(), relative_path=branding.logo, data=data)


def brand_files(manifest: Manifest) -> tuple[BrandFile, ...]:
    """The logo, then every file of the brand folder by path (links out of the folder and version-control
    folders such as ``.git`` are left out).

    A link that leads out of the folder is never loaded (templates and the PDF's resources are
    read only inside their folders), so it is not an input. The logo is listed once, as the logo,
    even when it lies in the brand folder.
    """
    logo = _read_logo(manifest)
    files: list[BrandFile] = [logo] if logo is not None else []
    folder = brand_folder(manifest)
    branding = manifest.spec.project.branding
    if folder is None or branding is None or branding.templates is None:
        return tuple(files)
    found: list[tuple[str, Path]] = []
    for top, folders, names in os.walk(folder):
        folders[:] = sorted(name for name in folders if name not in VERSION_CONTROL_FOLDERS)
        for name in names:
            path = Path(top) / name
            real = path.resolve()
            if real.is_file() and real.is_relative_to(folder) and (logo is None or real != logo.path):
                found.append((path.relative_to(folder).as_posix(), path))
    written = branding.templates.replace("\\", "/").rstrip("/")
    for inside, path in sorted(found):
        files.append(BrandFile(name=TEMPLATE_INPUT_PREFIX + inside, path=path.resolve(),
                               relative_path=f"{written}/{inside}", data=path.read_bytes()))
    return tuple(files)


def logo_data_url(manifest: Manifest, document: Mapping[str, Any]) -> str | None:
    """The logo as a ``data:`` URL for the page, read again and checked against results.json's hash."""
    recorded = next((entry for entry in document.get("inputs", ())
                     if entry.get("role") == BRAND_ROLE and entry.get("name") == LOGO_INPUT), None)
    logo = _read_logo(manifest)
    if logo is None or recorded is None:
        return None
    if sha256_bytes(logo.data) != recorded.get("sha256"):
        raise LogoUnusableError(location=Location(logo.path), path=logo.path,
                                problem="it changed while reportgen ran, so the dossier would not match results.json",
                                remedy="run again once the logo is final")
    media_type = logo_media_type(logo.data)
    return f"data:{media_type};base64,{base64.b64encode(logo.data).decode('ascii')}"
