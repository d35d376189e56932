"""A labs file's bytes into FHIR resources as JSON objects: a Bundle, one resource, or NDJSON.

Bounded: a file larger than `MAX_BYTES` is refused before it is parsed, and
JSON that is not plain data (NaN, nesting too deep) is refused with the line
where it fails.  Nothing here knows FHIR beyond `resourceType` and a Bundle's
`entry` list; `fhir.py` validates what is read.
"""

from __future__ import annotations

import hashlib
import json
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from osmodose.errors import LabsFileError

#: A course of labs is some kilobytes; a whole record export of one patient a few MB.
MAX_BYTES = 64 * 1024 * 1024


@dataclass(frozen=True)
class RawResource:
    """One resource as parsed JSON, with where it stands in the file (`entry 3`, `line 12`) and its fullUrl."""

    where: str
    data: dict[str, Any]
    full_url: str | None = None

    @property
    def kind(self) -> str:
        return str(self.data.get("resourceType"))

    @property
    def name(self) -> str:
        """`Observation/na-2`, or `Observation at entry 3` when it has no id."""
        ident = self.data.get("id")
        return f"{self.kind}/{ident}" if isinstance(ident, str) and ident else f"{self.kind} at {self.where}"


@dataclass(frozen=True)
class RawFile:
    path: Path
    sha256: str
    resources: tuple[RawResource, ...]
    ignored: tuple[str, ...]


def read_raw(path: Path | str) -> RawFile:
    """The resources of a FHIR JSON file (Bundle, single resource) or NDJSON file, or a LabsFileError."""
    path = Path(path)
    try:
        with path.open("rb") as handle:
            raw = handle.read(MAX_BYTES + 1)
    except OSError as error:
        raise LabsFileError(path, f"cannot be read: {error.strerror or type(error).__name__}") from None
    if len(raw) > MAX_BYTES:
        raise LabsFileError(path, f"is larger than {MAX_BYTES // (1024 * 1024)} MiB: not a labs file")
    digest = hashlib.sha256(raw).hexdigest()
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        raise LabsFileError(path, "is not UTF-8 text") from None
    if not text.strip():
        raise LabsFileError(path, "is empty")
    documents = _documents(path, text)
    resources: list[RawResource] = []
    ignored: list[str] = []
    for where, document in documents:
        if not isinstance(document, dict) or not isinstance(document.get("resourceType"), str):
            raise LabsFileError(path, f"{where} is not a FHIR resource (no resourceType)")
        if document["resourceType"] == "Bundle":
            _entries(path, where, document, resources, ignored)
        else:
            resources.append(RawResource(where, document))
    return RawFile(path, digest, tuple(resources), tuple(ignored))


def _loads(text: str) -> Any:
    def refuse(constant: str) -> Any:
        raise ValueError(f"{constant} is not a JSON number")

    return json.loads(text, parse_constant=refuse)


def _documents(path: Path, text: str) -> list[tuple[str, Any]]:
    """One JSON document (a Bundle or a resource), or NDJSON: one resource per line."""
    try:
        return [("the file", _loads(text))]
    except json.JSONDecodeError as error:
        if error.msg != "Extra data":
            raise LabsFileError(
                path, f"is not valid JSON at line {error.lineno}, column {error.colno} ({error.msg})"
            ) from None
    except (ValueError, RecursionError) as error:
        raise LabsFileError(path, f"is not plain JSON data ({_why(error)})") from None
    documents = []
    for number, line in enumerate(text.splitlines(), start=1):
        if not line.strip():
            continue
        try:
            documents.append((f"line {number}", _loads(line)))
        except json.JSONDecodeError as error:
            raise LabsFileError(path, f"line {number} is not valid JSON ({error.msg}): not NDJSON either") from None
        except (ValueError, RecursionError) as error:
            raise LabsFileError(path, f"line {number} is not plain JSON data ({_why(error)})") from None
    return documents


def _why(error: Exception) -> str:
    return "nested too deep" if isinstance(error, RecursionError) else str(error)


def _entries(path: Path, where: str, bundle: dict[str, Any], resources: list[RawResource], ignored: list[str]) -> None:
    entries = bundle.get("entry", [])
    if not isinstance(entries, list):
        raise LabsFileError(path, f"{where}: the Bundle's entry is not a list")
    for number, entry in enumerate(entries, start=1):
        place = f"entry {number}" if where == "the file" else f"{where} entry {number}"
        resource = entry.get("resource") if isinstance(entry, dict) else None
        if not isinstance(resource, dict) or not isinstance(resource.get("resourceType"), str):
            raise LabsFileError(path, f"{place} holds no FHIR resource")
        full_url = entry.get("fullUrl")
        if resource["resourceType"] == "Bundle":
            ignored.append(f"{RawResource(place, resource).name}: a Bundle inside a Bundle is not read; ignored")
            continue
        resources.append(RawResource(place, resource, full_url if isinstance(full_url, str) else None))
