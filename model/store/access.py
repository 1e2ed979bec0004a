"""Who the user is and what they may change: the sign-in configuration, users and permissions.

Pure logic, no streamlit: the dashboard (``ui/``) reads the configuration and the request,
and asks here. Sign-in is off by default; with it off, everyone may do everything, as on a
laptop for one person. With it on, the configuration names the *editors*, who alone may
change the reference values (prices, GWP, MAC, vaporizer maxima) and put an earlier set back
in use; every signed-in user may save plans and scenarios.

The configuration is a table of the project's own (``[gas_ledger]`` in
``.streamlit/secrets.toml``, beside Streamlit's own ``[auth]`` for sign-in)::

    [gas_ledger]
    sign_in = "header"                  # off (default) | streamlit | header
    identity_header = "X-Remote-User"   # header mode: the header the proxy sets
    editors = ["sustainability.lead@fernhollow.example", "pharmacy@fernhollow.example"]
    provider = ""                       # streamlit mode: a named provider of [auth], if several
"""

from __future__ import annotations

import getpass
import re
import unicodedata
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

from model.base.errors import InputError

#: How the dashboard knows who the user is.
SIGN_IN_MODES = ("off", "streamlit", "header")
#: Where the configuration lives, for messages.
CONFIG_PLACE = "[gas_ledger] in .streamlit/secrets.toml"
#: Shown where an author would be when no one was signed in.
NOT_SIGNED_IN = "not signed in"
#: The author the command line writes when it saves (with the OS user when known).
COMMAND_LINE = "command line"
_HEADER_NAME = re.compile(r"[A-Za-z0-9][A-Za-z0-9-]{0,63}")
#: Longest identity accepted from a header or a sign-in claim. [characters]
MAX_IDENTITY_CHARS = 200


@dataclass(frozen=True)
class AccessConfig:
    """The sign-in configuration. The default (``sign_in = "off"``) is no identity at all."""

    sign_in: str = "off"
    identity_header: str = ""
    editors: frozenset[str] = frozenset()
    provider: str = ""

    @property
    def enabled(self) -> bool:
        """Whether sign-in is configured (anything but ``sign_in = "off"``)."""
        return self.sign_in != "off"


@dataclass(frozen=True)
class User:
    """Who is using the dashboard.

    ``id`` is what the editors list is matched against (the e-mail of a Streamlit sign-in,
    the header's value); empty when no one is signed in.
    """

    id: str = ""
    name: str = ""

    @property
    def signed_in(self) -> bool:
        """Whether someone is signed in."""
        return bool(self.id)

    @property
    def label(self) -> str:
        """How the user is shown and recorded as author."""
        if not self.signed_in:
            return ""
        return self.id if not self.name or self.name == self.id else f"{self.name} <{self.id}>"


NO_ONE = User()


@dataclass(frozen=True)
class Permission:
    """Whether an action is allowed, and the reason shown when it is not."""

    allowed: bool
    reason: str = ""


def access_config(data: Mapping | None, where: str = CONFIG_PLACE) -> AccessConfig:
    """Read the sign-in configuration; an absent or empty table means sign-in off.

    Raises
    ------
    InputError
        A value is wrong: the message names the key and what is allowed.
    """
    if data is None:
        return AccessConfig()
    if not isinstance(data, Mapping):
        raise InputError(where, type(data).__name__, "expected a table of settings")
    known = {"sign_in", "identity_header", "editors", "provider"}
    unknown = sorted(set(data) - known)
    if unknown:
        raise InputError(f"{where}, {unknown[0]}", unknown[0], "allowed keys are " + ", ".join(sorted(known)))
    mode = data.get("sign_in", "off")
    if mode not in SIGN_IN_MODES:
        raise InputError(f"{where}, sign_in", mode, "allowed: " + ", ".join(SIGN_IN_MODES))
    header = data.get("identity_header", "")
    if not isinstance(header, str) or (header and not _HEADER_NAME.fullmatch(header)):
        raise InputError(f"{where}, identity_header", header, "expected a header name of letters, digits and -")
    if mode == "header" and not header:
        raise InputError(
            f"{where}, identity_header",
            "",
            'sign_in = "header" needs the header the proxy sets, e.g. identity_header = "X-Remote-User"',
        )
    editors = data.get("editors", [])
    if not isinstance(editors, (list, tuple)) or not all(isinstance(e, str) and e.strip() for e in editors):
        raise InputError(f"{where}, editors", editors, "expected a list of user names or e-mail addresses")
    provider = data.get("provider", "")
    if not isinstance(provider, str):
        raise InputError(f"{where}, provider", provider, "expected the name of a provider in [auth]")
    keys = []
    for entry in editors:
        ident = _clean_identity(entry.strip(" "))
        if ident is None:
            raise InputError(
                f"{where}, editors",
                entry,
                f"expected a user name or e-mail address of at most {MAX_IDENTITY_CHARS} printable "
                "characters in Unicode NFC (as the sign-in sends it)",
            )
        keys.append(identity_key(ident))
    return AccessConfig(mode, header if mode == "header" else "", frozenset(keys), provider.strip())


_ASCII_LOWER = str.maketrans("ABCDEFGHIJKLMNOPQRSTUVWXYZ", "abcdefghijklmnopqrstuvwxyz")


def identity_key(text: str) -> str:
    """What an identity is compared by: the text exactly, with the ASCII letters A-Z lower-cased.

    Nothing else is folded or normalised, so two different addresses never compare equal
    (Unicode case folding would take "\u00df" for "ss", "\u017f" for "s", "\ufb01" for "fi"
    and the Kelvin sign "\u212a" for "k"). Identities not in Unicode NFC are refused before
    they get here (:func:`user_from_header`, :func:`user_from_sign_in`), and so are those
    that only look like an editor's (:func:`confusable_key`).
    """
    return text.translate(_ASCII_LOWER)


def confusable_key(text: str) -> str:
    """The identity with every compatibility form and case folded (NFKC, case folding, NFKC).

    Two identities with the same ``confusable_key`` but different :func:`identity_key` look
    alike to a reader (a sharp s and "ss", the long s and "s", the ligature "\ufb01" and
    "fi", the Kelvin sign and "K"): one of them may not sign in where the other is an
    editor. Used only to refuse, never to match. (Unicode Standard Annex #15 and the
    Unicode Standard, section 3.13, "Default Case Algorithms": NFKC_Casefold.)
    """
    return unicodedata.normalize("NFKC", unicodedata.normalize("NFKC", text).casefold())


def _clean_identity(value) -> str | None:
    """The identity as sent, or None when it is not one we accept.

    Refused, never repaired: anything but text; empty or longer than
    :data:`MAX_IDENTITY_CHARS`; a character that is not printable anywhere in it, at its
    ends included (control characters C0 and C1 such as NEL U+0085, the no-break space
    U+00A0 and every other space but the ASCII one, format characters); text not in Unicode
    NFC (the Kelvin sign U+212A is not: its NFC is "K"); spaces at either end.
    """
    if not isinstance(value, str):
        return None
    if not value or len(value) > MAX_IDENTITY_CHARS or not value.isprintable():
        return None
    if value != value.strip(" ") or not unicodedata.is_normalized("NFC", value):
        return None
    return value


def _confusable_with_editor(config: AccessConfig, ident: str) -> bool:
    """True when ``ident`` is not an editor but looks like one (same :func:`confusable_key`)."""
    key = identity_key(ident)
    if key in config.editors:
        return False
    look = confusable_key(ident)
    return any(confusable_key(e) == look for e in config.editors)


def sign_in_refusal(config: AccessConfig, ident) -> str:
    """Why an identity from the proxy or the sign-in signs no one in ("" when it is accepted)."""
    if not isinstance(ident, str) or not ident:
        return "no identity was sent"
    if len(ident) > MAX_IDENTITY_CHARS:
        return f"the identity is longer than {MAX_IDENTITY_CHARS} characters"
    if not ident.isprintable() or ident != ident.strip(" "):
        return "the identity holds a control character or a space other than an inner ASCII space"
    if not unicodedata.is_normalized("NFC", ident):
        return "the identity is not in Unicode NFC (a compatibility character such as the Kelvin sign)"
    if _confusable_with_editor(config, ident):
        return "the identity looks like an editor's but is not the same text"
    return ""


def user_from_header(config: AccessConfig, values: Sequence[str]) -> User:
    """The user a trusted proxy named in its header, or no one.

    Only honoured in header mode: otherwise a header of that (or any) name, forged by a
    browser, is ignored. ``values`` are every value of the configured header in the request;
    a header sent more than once is refused (a proxy that appends rather than replaces it
    would let a browser's own value through), as is an empty or overlong one, or one with a
    control character or a space other than an inner ASCII space anywhere, its ends included
    (refused, never stripped; the server has already removed the optional spaces and tabs
    around a header value, RFC 9110 section 5.5), one not in Unicode NFC, and one that only
    looks like an editor's (:func:`confusable_key`). The server decodes header bytes as
    Latin-1, so the byte 0xDF arrives as a sharp s: exact comparison keeps it apart from "ss".
    """
    if config.sign_in != "header" or len(values) != 1:
        return NO_ONE
    value = _clean_identity(values[0])
    if value is None or _confusable_with_editor(config, value):
        return NO_ONE
    return User(value, value)


def user_from_sign_in(config: AccessConfig, claims: Mapping) -> User:
    """The user of Streamlit's OpenID Connect sign-in (``st.user``), or no one.

    Only honoured in streamlit mode, and only when ``is_logged_in`` is true. The e-mail
    address identifies the user (else the provider's subject, ``sub``).
    """
    if config.sign_in != "streamlit" or claims.get("is_logged_in") is not True:
        return NO_ONE
    ident = _clean_identity(claims.get("email")) or _clean_identity(claims.get("sub"))
    if ident is None or _confusable_with_editor(config, ident):
        return NO_ONE
    name = _clean_identity(claims.get("name")) or ident
    return User(ident, name)


def is_editor(config: AccessConfig, user: User) -> bool:
    """True when the signed-in user is on the editors list (compared by :func:`identity_key`)."""
    return user.signed_in and identity_key(user.id) in config.editors


def may_edit_reference(config: AccessConfig, user: User) -> Permission:
    """Whether the user may change the reference values or put an earlier set back in use."""
    if not config.enabled:
        return Permission(True)
    if not user.signed_in:
        return Permission(False, "Sign in to change the reference values; until then they are shown read-only.")
    if not is_editor(config, user):
        return Permission(
            False,
            f"Only the department's editors change the reference values that everyone's "
            f"figures are worked out with; {user.label} is not on the list. Ask an editor "
            f"or the server's administrator.",
        )
    return Permission(True)


def may_save(config: AccessConfig, user: User) -> Permission:
    """May the user save plans and scenarios? Everyone signed in may (everyone when sign-in is off)."""
    if config.enabled and not user.signed_in:
        return Permission(False, "Sign in to save: every saved version records who saved it.")
    return Permission(True)


def author_label(author: str) -> str:
    """A stored author as shown in version lists and the change log."""
    return author or NOT_SIGNED_IN


def command_line_author() -> str:
    """The author the command line records: "command line (OS user)", or "command line"."""
    try:
        who = getpass.getuser()
    except (KeyError, OSError, ImportError):
        who = ""
    shown = _clean_identity(who)
    return f"{COMMAND_LINE} ({shown})" if shown else COMMAND_LINE
