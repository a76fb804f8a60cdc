"""Deep-sky object sizes from OpenNGC, read through ``pyongc`` (both installed from the package index).

OpenNGC (Mattia Verga and contributors) is an open database of the NGC and IC catalogues and their
cross-identifications, licensed CC BY-SA 4.0; ``pyongc`` ships it as a read-only SQLite file, so
look-ups work offline. Object sizes are the catalogue's major and minor axes in arcminutes; where it
gives only one axis (e.g. for most open clusters) the object is taken as round.

Designations are read the way ``pyongc`` reads them ("NGC 891", "NGC0891", "M 33", "m33", "IC 434",
"B 33", "C 14", "Mel 22", "UGC 1831", ...), plus "Messier 33" for "M 33" and OpenNGC's common names
("Triangulum Galaxy"). Nothing is loaded at import
time: look-ups and the list of names used for suggestions are cached on first use.
"""

from __future__ import annotations

import difflib
import re
import sqlite3
from dataclasses import dataclass
from functools import cache

CREDIT = ("OpenNGC (Mattia Verga and contributors), CC BY-SA 4.0, "
          "https://github.com/mattiaverga/OpenNGC, read through pyongc.")

MAX_LENGTH = 40
_ALLOWED = re.compile(r"^[A-Za-z0-9 +\-.]+$")
_SPLIT = re.compile(r"^([A-Za-z]+)0*(\d.*)$")


@dataclass(frozen=True)
class CatalogueObject:
    """One object's identity and size, as OpenNGC gives it."""

    designation: str  # e.g. "NGC 598"
    aliases: tuple[str, ...]  # e.g. ("M 33", "Triangulum Galaxy")
    kind: str  # OpenNGC's object type, e.g. "Galaxy"
    major_arcmin: float
    minor_arcmin: float
    minor_given: bool

    @property
    def label(self) -> str:
        return f"{self.designation} ({', '.join(self.aliases)})" if self.aliases else self.designation


class UnknownObject(ValueError):
    """A designation that OpenNGC does not know (or for which it gives no size)."""


def pretty(name: str) -> str:
    """Catalogue name as people write it: "NGC0598" → "NGC 598", "M033" → "M 33"."""
    match = _SPLIT.match(name)
    return f"{match[1]} {match[2]}" if match else name


def normalise(text: str) -> str:
    """Upper case, no blanks, "MESSIER" shortened to "M": the form used for look-ups and matching."""
    key = re.sub(r"\s+", "", text.upper())
    return re.sub(r"^MESSIER", "M", key)


def lookup(text: str) -> CatalogueObject:
    """The object named ``text``; raises :class:`UnknownObject` with close matches otherwise."""
    if not isinstance(text, str) or not text.strip():
        raise UnknownObject("give a catalogue designation such as 'NGC 891' or 'M 33'")
    if len(text) > MAX_LENGTH or not _ALLOWED.match(text):
        raise UnknownObject(
            f"{text[:MAX_LENGTH]!r} is not a catalogue designation (letters, digits, spaces, '+', "
            f"'-' and '.', at most {MAX_LENGTH} characters)"
        )
    key = normalise(text)
    try:
        return _lookup(key)
    except _NotFound:
        raise UnknownObject(_not_found_message(key, text.strip())) from None


class _NotFound(Exception):
    pass


@cache  # keyed by the normalised name; misses raise, so only real objects are kept
def _lookup(key: str) -> CatalogueObject:
    # Imported here so that importing rigbench does not open the catalogue.
    from pyongc import ongc
    from pyongc.exceptions import ObjectNotFound, UnknownIdentifier

    try:
        found = ongc.Dso(_common_names().get(key, key))
    except (ObjectNotFound, UnknownIdentifier):
        raise _NotFound from None
    major, minor, _ = found.dimensions
    designation = pretty(found.name)
    if major is None or major <= 0:
        raise UnknownObject(f"OpenNGC gives no size for {designation}; choose another object")
    messier, _, _, common, _ = found.identifiers
    aliases = ((pretty(messier),) if messier else ()) + tuple(common or ())[:1]
    return CatalogueObject(
        designation=designation, aliases=aliases, kind=found.type,
        major_arcmin=float(major), minor_arcmin=float(minor) if minor else float(major),
        minor_given=bool(minor),
    )


def _not_found_message(key: str, shown: str) -> str:
    matches = close_matches(key)
    hint = f"; close matches: {', '.join(matches)}" if matches else ""
    return f"{shown!r} is not in the OpenNGC catalogue{hint}"


def close_matches(text: str, count: int = 5) -> list[str]:
    """Up to ``count`` designations or common names that look like ``text`` (difflib ratio ≥ 0.7)."""
    names = _names()
    keys = list(names)
    return [names[k] for k in difflib.get_close_matches(normalise(text), keys, n=count, cutoff=0.7)]


@cache
def _rows() -> tuple[tuple[str, str, str], ...]:
    """(main name, Messier number, common names) of every OpenNGC object, read once."""
    from pyongc import DBPATH

    connection = sqlite3.connect(f"file:{DBPATH}?mode=ro", uri=True)
    try:
        rows = connection.execute("SELECT name, messier, commonnames FROM objects").fetchall()
    finally:
        connection.close()
    return tuple((name, messier or "", common or "") for name, messier, common in rows)


@cache
def _common_names() -> dict[str, str]:
    """Normalised common name ("ANDROMEDAGALAXY") → main name ("NGC0224")."""
    names: dict[str, str] = {}
    for name, _, common in _rows():
        for alias in filter(None, (c.strip() for c in common.split(","))):
            names.setdefault(normalise(alias), name)
    return names


@cache
def _names() -> dict[str, str]:
    """Normalised key → shown name, for every main name, Messier number and common name."""
    names: dict[str, str] = {}
    for name, messier, common in _rows():
        for shown in (pretty(name), f"M {int(messier)}" if messier else "",
                      *(c.strip() for c in common.split(","))):
            if shown:
                names.setdefault(normalise(shown), shown)
    return names
