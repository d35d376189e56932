"""The unit's key: each verification record is signed (Ed25519), so only the key's holder can write one.

A SHA-256 chain shows that a record changed, but anyone can recompute every
hash after an edit.  A signature over each entry cannot be recomputed without
the private key, which is kept outside the log's folder, readable by its
owner only (0600).  Anyone with the public key (`KEY.pub`, or the key itself)
can check the signatures; only the key's holder can make them.

Ed25519 (RFC 8032, through the `cryptography` package): small keys, small
signatures, no parameters to choose wrongly, and checking needs only the
public half, so an auditor can check a log without being able to write one.

Where the key lives: `--key PATH`, else `$OSMODOSE_LOG_KEY`, else the
per-user configuration folder (`$XDG_CONFIG_HOME/osmodose/log-signing.key`,
default `~/.config/osmodose/log-signing.key`, on Linux; see docs/verify.md).
"""

from __future__ import annotations

import hashlib
import os
import stat
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path

from cryptography.exceptions import InvalidSignature, UnsupportedAlgorithm
from cryptography.hazmat.primitives import serialization
from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey, Ed25519PublicKey

from osmodose.errors import SigningKeyError
from osmodose.storage.atomic import atomic_write
from osmodose.storage.bounded import FileRefused, os_reason, read_bounded
from osmodose.verify.paths import user_file

KEY_ENV_VAR = "OSMODOSE_LOG_KEY"
KEY_FILE_NAME = "log-signing.key"
PUBLIC_SUFFIX = ".pub"
#: A PEM Ed25519 key is about 120 bytes; anything much larger is not one.
_KEY_MAX_BYTES = 4096


def default_key_path(
    env: Mapping[str, str] | None = None, platform: str | None = None, home: Path | None = None
) -> Path:
    """$OSMODOSE_LOG_KEY, else the per-user configuration folder (never the log's state folder)."""
    return user_file("config", KEY_ENV_VAR, KEY_FILE_NAME, env, platform, home)


def key_path(option: str | None, env: Mapping[str, str] | None = None) -> Path:
    """The key to use: the --key option when given, else the default."""
    if option is not None and option.strip():
        return Path(option).expanduser()
    return default_key_path(env)


def public_path(path: Path) -> Path:
    return path.with_name(path.name + PUBLIC_SUFFIX)


def _raw_public(public: Ed25519PublicKey) -> bytes:
    return public.public_bytes(serialization.Encoding.Raw, serialization.PublicFormat.Raw)


def fingerprint(public: Ed25519PublicKey) -> str:
    """The key's short name: the first 16 hex characters of the SHA-256 of its raw public bytes."""
    return hashlib.sha256(_raw_public(public)).hexdigest()[:16]


@dataclass(frozen=True)
class Checker:
    """The public half: checks signatures, cannot make them."""

    public: Ed25519PublicKey
    key_id: str
    path: Path

    def check(self, body: bytes, signature_hex: str) -> bool:
        try:
            self.public.verify(bytes.fromhex(signature_hex), body)
        except (InvalidSignature, ValueError):
            return False
        return True


@dataclass(frozen=True)
class Signer:
    """The unit's private key: signs each log entry's exact bytes."""

    private: Ed25519PrivateKey
    key_id: str
    path: Path

    def sign(self, body: bytes) -> str:
        return self.private.sign(body).hex()

    def checker(self) -> Checker:
        return Checker(self.private.public_key(), self.key_id, self.path)


def outside_log_folder(key: Path, log: Path) -> None:
    """Refuse a key kept in the log's folder (or below it): whoever copies or hands over the log must not get it."""
    folder = log.expanduser().absolute().parent.resolve()
    where = key.expanduser().absolute().resolve()
    if folder == where.parent or folder in where.parents:
        raise SigningKeyError(
            key,
            f"is inside the log's folder {folder}: keep the key elsewhere "
            f"(the default, or ${KEY_ENV_VAR}; see docs/verify.md)",
        )


class KeyExists(SigningKeyError):
    """There is a key at the path already: a new one is never made over it."""


def init_key(path: Path | str) -> Signer:
    """Make a new key at `path` (0600, its folder 0700) and its public half at `path.pub`; never replaces one.

    The key file appears whole or not at all (`atomic_write` without
    overwrite), so two first uses at once cannot leave half a key: one makes
    it, the other finds it.
    """
    path = Path(path)
    if path.exists() or path.is_symlink():
        raise KeyExists(path, "already exists; it was not replaced (a new key would not check the old records)")
    private = Ed25519PrivateKey.generate()
    pem = private.private_bytes(
        serialization.Encoding.PEM, serialization.PrivateFormat.PKCS8, serialization.NoEncryption()
    )
    public_pem = private.public_key().public_bytes(
        serialization.Encoding.PEM, serialization.PublicFormat.SubjectPublicKeyInfo
    )
    try:
        path.parent.mkdir(mode=0o700, parents=True, exist_ok=True)
        atomic_write(path, pem, overwrite=False, mode=0o600)
    except FileExistsError:
        raise KeyExists(path, "already exists; it was not replaced") from None
    except OSError as error:
        raise SigningKeyError(path, f"cannot be written: {os_reason(error)}") from None
    try:
        atomic_write(public_path(path), public_pem, overwrite=True, mode=0o644)
    except OSError as error:
        raise SigningKeyError(public_path(path), f"cannot be written: {os_reason(error)}") from None
    return Signer(private, fingerprint(private.public_key()), path)


def _read_key_file(path: Path) -> bytes:
    try:
        return read_bounded(path, _KEY_MAX_BYTES)
    except FileNotFoundError:
        raise
    except FileRefused as refused:
        raise SigningKeyError(path, refused.problem) from None
    except OSError as error:
        raise SigningKeyError(path, f"cannot be read: {os_reason(error)}") from None


def load_signer(path: Path | str) -> Signer:
    """The private key at `path`; FileNotFoundError when there is none, SigningKeyError when it cannot be used."""
    path = Path(path)
    data = _read_key_file(path)
    if hasattr(os, "getuid") and stat.S_IMODE(os.stat(path).st_mode) & 0o077:
        raise SigningKeyError(path, "can be read by others: allow its owner only (chmod 600), or make a new key")
    try:
        private = serialization.load_pem_private_key(data, password=None)
    except (ValueError, TypeError, UnsupportedAlgorithm):
        raise SigningKeyError(path, "is not a private key osmodose can read (PEM, PKCS#8, Ed25519)") from None
    if not isinstance(private, Ed25519PrivateKey):
        raise SigningKeyError(path, "is not an Ed25519 key")
    return Signer(private, fingerprint(private.public_key()), path)


def load_checker(path: Path | str) -> Checker | None:
    """The public key to check signatures with: from the private key at `path`, else from `path` or `path.pub`
    as a public key; None when there is no key there at all.
    """
    path = Path(path)
    for candidate in (path, public_path(path)):
        try:
            data = _read_key_file(candidate)
        except FileNotFoundError:
            continue
        if b"PRIVATE KEY" in data:
            return load_signer(candidate).checker()
        try:
            public = serialization.load_pem_public_key(data)
        except (ValueError, TypeError, UnsupportedAlgorithm):
            raise SigningKeyError(candidate, "is not a key osmodose can read (PEM, Ed25519)") from None
        if not isinstance(public, Ed25519PublicKey):
            raise SigningKeyError(candidate, "is not an Ed25519 key")
        return Checker(public, fingerprint(public), candidate)
    return None


def signer_for_log(path: Path, log: Path) -> tuple[Signer, bool]:
    """The key that signs records appended to `log`, made on first use; (signer, made now)."""
    outside_log_folder(path, log)
    try:
        return load_signer(path), False
    except FileNotFoundError:
        pass
    try:
        return init_key(path), True
    except KeyExists:  # made by another verification at the same moment
        return load_signer(path), False
