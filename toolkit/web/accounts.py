"""Accounts of the browser face, kept in the register (table ``accounts``, schema version 3).

A password is stored as ``scrypt$N$r$p$SALT$HASH`` (hex), from the standard library's
:func:`hashlib.scrypt`, a memory-hard key derivation (RFC 7914). N = 2**14, r = 8, p = 1 use 16 MiB per
check; these are the parameters RFC 7914, section 2, names for interactive sign-ins. A check compares in
constant time (:func:`hmac.compare_digest`).

Roles decide what a person may do (see :data:`MAY`); the command line creates and removes accounts, the
browser face only reads them.
"""

from __future__ import annotations

import hashlib
import hmac
import re
import secrets

from toolkit.errors import BadInput

__all__ = ["ROLES", "MAY", "hash_password", "check_password", "add", "remove", "set_password", "set_role",
           "list_accounts", "find", "count", "may"]

#: The roles a person can have.
ROLES = ("operator", "machinist", "planner", "inspector", "administrator")

#: What each kind of change needs: the roles allowed to do it. Computing (tolerance, calculators, the steps
#: of a balancing run) needs any account and changes nothing.
MAY = {
    "record": ("operator", "machinist", "inspector", "administrator"),   # record a balancing run as a job
    "check": ("operator", "machinist", "inspector", "administrator"),    # enter a check run
    "sign": ("operator", "machinist", "inspector"),                      # sign off in one's own role
    "release": ("inspector",),                                           # only an inspector releases a job
    "plan": ("planner", "administrator"),                                # upload a planner sheet
}

_N, _R, _P = 2 ** 14, 8, 1     # RFC 7914, section 2: parameters for interactive use
_MAXMEM = 64 * 1024 * 1024
MIN_PASSWORD = 10              # characters (common practice, no source)
MAX_PASSWORD = 1024
_NAME = re.compile(r"^[A-Za-z0-9][A-Za-z0-9._@-]{0,63}$")


def _check_name(name) -> str:
    text = str(name or "").strip()
    if not _NAME.match(text):
        raise BadInput(f"account name: {text!r} is not allowed; use 1 to 64 letters, digits, '.', '_', '@' or '-', "
                       "starting with a letter or digit")
    return text


def _check_role(role) -> str:
    text = str(role or "").strip().lower()
    if text not in ROLES:
        raise BadInput(f"role: {text!r} is not one of {', '.join(ROLES)}")
    return text


def _check_units(units) -> str:
    text = str(units or "metric").strip().lower()
    if text not in ("metric", "imperial"):
        raise BadInput(f"units: {text!r} is not allowed; use metric or imperial")
    return text


def hash_password(password: str) -> str:
    """The stored form of ``password`` (a fresh random salt each time).

    >>> stored = hash_password("correct horse battery")
    >>> stored.startswith("scrypt$16384$8$1$"), check_password("correct horse battery", stored)
    (True, True)
    >>> check_password("wrong horse battery", stored)
    False
    """
    if not isinstance(password, str) or len(password) < MIN_PASSWORD:
        raise BadInput(f"password: give at least {MIN_PASSWORD} characters")
    if len(password) > MAX_PASSWORD:
        raise BadInput(f"password: at most {MAX_PASSWORD} characters")
    salt = secrets.token_bytes(16)
    digest = hashlib.scrypt(password.encode("utf-8"), salt=salt, n=_N, r=_R, p=_P, maxmem=_MAXMEM, dklen=32)
    return f"scrypt${_N}${_R}${_P}${salt.hex()}${digest.hex()}"


def check_password(password: str, stored: str) -> bool:
    """Whether ``password`` matches the stored form (False for anything malformed)."""
    try:
        kind, n, r, p, salt, digest = stored.split("$")
        if kind != "scrypt" or not isinstance(password, str) or len(password) > MAX_PASSWORD:
            return False
        got = hashlib.scrypt(password.encode("utf-8"), salt=bytes.fromhex(salt), n=int(n), r=int(r), p=int(p),
                             maxmem=_MAXMEM, dklen=len(bytes.fromhex(digest)))
    except (ValueError, TypeError, AttributeError):
        return False
    return hmac.compare_digest(got.hex(), digest)


#: Checked against when a name is unknown, so that a wrong name costs as long as a wrong password.
_DUMMY = None


def _dummy() -> str:
    global _DUMMY
    if _DUMMY is None:
        _DUMMY = hash_password(secrets.token_hex(16))
    return _DUMMY


def add(reg, name: str, role: str, password: str, *, units: str = "metric") -> dict:
    """Create an account; refuses a name that exists."""
    from sqlalchemy import select

    from toolkit.register.schema import accounts
    from toolkit.register.store import now

    name, role, units = _check_name(name), _check_role(role), _check_units(units)
    stored = hash_password(password)
    with reg.write() as conn:
        if conn.execute(select(accounts.c.id).where(accounts.c.name == name)).first() is not None:
            raise BadInput(f"account {name!r} exists already; change its password or role instead")
        at = now()
        conn.execute(accounts.insert().values(name=name, role=role, password=stored, units=units, created=at,
                                              changed=at))
    return {"name": name, "role": role, "units": units, "created": at}


def _change(reg, name: str, **values) -> dict:
    from sqlalchemy import update

    from toolkit.register.schema import accounts
    from toolkit.register.store import now

    name = _check_name(name)
    with reg.write() as conn:
        done = conn.execute(update(accounts).where(accounts.c.name == name)
                            .values(changed=now(), **values)).rowcount
    if not done:
        raise BadInput(f"account {name!r} does not exist")
    return {"name": name} | {k: v for k, v in values.items() if k != "password"}


def set_password(reg, name: str, password: str) -> dict:
    """Give an account a new password (its open sessions end: they carry the old change time)."""
    return _change(reg, name, password=hash_password(password))


def set_role(reg, name: str, role: str) -> dict:
    return _change(reg, name, role=_check_role(role))


def set_units(reg, name: str, units: str) -> dict:
    return _change(reg, name, units=_check_units(units))


def remove(reg, name: str) -> dict:
    from sqlalchemy import delete

    from toolkit.register.schema import accounts

    name = _check_name(name)
    with reg.write() as conn:
        done = conn.execute(delete(accounts).where(accounts.c.name == name)).rowcount
    if not done:
        raise BadInput(f"account {name!r} does not exist")
    return {"name": name, "removed": True}


def list_accounts(reg) -> list[dict]:
    from sqlalchemy import select

    from toolkit.register.schema import accounts

    with reg.read() as conn:
        rows = conn.execute(select(accounts.c.name, accounts.c.role, accounts.c.units, accounts.c.created,
                                   accounts.c.changed).order_by(accounts.c.name)).all()
    return [dict(r._mapping) for r in rows]


def count(reg) -> int:
    from sqlalchemy import func, select

    from toolkit.register.schema import accounts

    with reg.read() as conn:
        return int(conn.execute(select(func.count()).select_from(accounts)).scalar() or 0)


def find(reg, name: str) -> dict | None:
    """The account ``name`` (without its password hash), or None."""
    from sqlalchemy import select

    from toolkit.register.schema import accounts

    if not isinstance(name, str) or not _NAME.match(name):
        return None
    with reg.read() as conn:
        row = conn.execute(select(accounts.c.name, accounts.c.role, accounts.c.units, accounts.c.changed)
                           .where(accounts.c.name == name)).first()
    return None if row is None else dict(row._mapping)


def authenticate(reg, name: str, password: str) -> dict | None:
    """The account if ``name`` and ``password`` match, else None (a wrong name costs one scrypt too)."""
    from sqlalchemy import select

    from toolkit.register.schema import accounts

    row = None
    if isinstance(name, str) and _NAME.match(name):
        with reg.read() as conn:
            row = conn.execute(select(accounts).where(accounts.c.name == name)).first()
    if row is None:
        check_password(password, _dummy())
        return None
    if not check_password(password, row.password):
        return None
    return {"name": row.name, "role": row.role, "units": row.units, "changed": row.changed}


def may(role: str | None, action: str) -> bool:
    """Whether ``role`` may do ``action`` (a key of :data:`MAY`).

    >>> may("inspector", "release"), may("operator", "release"), may("planner", "plan")
    (True, False, True)
    """
    return role in MAY.get(action, ())
