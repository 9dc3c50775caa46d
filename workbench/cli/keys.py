"""``workbench keys``: create, register, trust, revoke and list analysts' signing keys.

Passphrases come from ``--passphrase-file``, the ``WORKBENCH_PASSPHRASE``
environment variable or an interactive prompt, never from the command line
(``--passphrase VALUE`` is refused without the value being echoed).

Keys that arrive in a case bundle are untrusted; ``keys trust`` is the
recorded act of a local administrator that makes one count in this store.
"""

from __future__ import annotations

import argparse
import sys

from workbench.cli._options import add_store_option as _store_option
from workbench.cli._options import print_json as _print_json
from workbench.cli._options import read_file as _read
from workbench.cli._options import refuse_passphrase_option

__all__ = ["register"]


def register(subparsers: argparse._SubParsersAction) -> None:
    """Add the ``keys`` command group."""
    parser = subparsers.add_parser("keys", help="analysts' Ed25519 signing keys")
    sub = parser.add_subparsers(dest="keys_command", metavar="SUBCOMMAND")
    parser.set_defaults(func=lambda args: (parser.print_help(), 2)[1])

    # No abbreviations: "--passphrase SECRET" must fail, not be read as --passphrase-file.
    p = sub.add_parser(
        "create", help="create a key pair (private key encrypted)", allow_abbrev=False
    )
    p.add_argument("--name", required=True, help="file stem, e.g. z.angstrom")
    p.add_argument("--out", required=True, metavar="DIR", help="folder for the two key files")
    p.add_argument("--passphrase-file", metavar="FILE", help="file holding the passphrase")
    refuse_passphrase_option(p)
    p.add_argument("--json", action="store_true", help="print JSON")
    p.set_defaults(func=_create)

    p = sub.add_parser("register", help="register an analyst's public key in the case store")
    p.add_argument("pubkey", metavar="PUBKEY", help="the .pub.pem file")
    p.add_argument("--name", required=True, help="analyst's name as it will appear on sheets")
    p.add_argument("--role", required=True, help="e.g. examiner, reviewer")
    _store_option(p)
    p.add_argument("--json", action="store_true", help="print JSON")
    p.set_defaults(func=_register)

    p = sub.add_parser("revoke", help="revoke a key (sheets it signed stop verifying)")
    p.add_argument("fingerprint", metavar="FINGERPRINT", help="SHA256:<hex> of the key")
    p.add_argument("--reason", required=True, help="why the key is revoked")
    p.add_argument("--actor", help="who revokes it (default: the login name)")
    _store_option(p)
    p.add_argument("--json", action="store_true", help="print JSON")
    p.set_defaults(func=_revoke)

    p = sub.add_parser(
        "trust",
        help="record a local administrator's trust in an imported key (hashed key-log event)",
    )
    p.add_argument("fingerprint", metavar="FINGERPRINT", help="SHA256:<hex> of the key")
    p.add_argument("--by", required=True, help="the local administrator taking responsibility")
    p.add_argument(
        "--reason", required=True, help="how the key was confirmed with its owner's laboratory"
    )
    _store_option(p)
    p.add_argument("--json", action="store_true", help="print JSON")
    p.set_defaults(func=_trust)

    p = sub.add_parser("list", help="list registered analysts and keys, with provenance")
    _store_option(p)
    p.add_argument("--json", action="store_true", help="print JSON")
    p.set_defaults(func=_list)

    p = sub.add_parser(
        "log", help="the hashed key log (registrations, imports, trust, revocations)"
    )
    p.add_argument("fingerprint", nargs="?", metavar="FINGERPRINT", help="one key only")
    _store_option(p)
    p.add_argument("--json", action="store_true", help="print JSON")
    p.set_defaults(func=_log)


def _create(args: argparse.Namespace) -> int:
    from workbench.findings.keys import generate_key_pair, read_passphrase, save_key_pair

    passphrase = read_passphrase(args.passphrase_file, confirm=True)
    pair = generate_key_pair(passphrase)
    private_path = save_key_pair(pair, args.out, args.name)
    public_path = private_path.with_name(f"{args.name}.pub.pem")
    info = {
        "fingerprint": pair.fingerprint,
        "private_key": str(private_path),
        "public_key": str(public_path),
    }
    if args.json:
        _print_json(info)
    else:
        print(f"fingerprint  {pair.fingerprint}")
        print(f"private key  {private_path}  (mode 0600; keep it and its passphrase safe)")
        print(f"public key   {public_path}")
        print(f"next: workbench keys register {public_path} --name 'NAME' --role ROLE")
    return 0


def _register(args: argparse.Namespace) -> int:
    from workbench.casefile import CaseStore
    from workbench.findings.keys import load_public_key

    pem = _read(args.pubkey, "public key")
    load_public_key(pem, source=args.pubkey)  # a clear message for a wrong file
    import getpass

    with CaseStore.open(args.store) as store:
        rec = store.register_analyst(args.name, args.role, pem, registered_by=getpass.getuser())
    if args.json:
        _print_json(rec.to_dict())
    else:
        print(f"registered {rec.name} ({rec.role}) with key {rec.fingerprint}")
    return 0


def _revoke(args: argparse.Namespace) -> int:
    import getpass

    from workbench.casefile import CaseStore

    actor = args.actor or getpass.getuser()
    with CaseStore.open(args.store) as store:
        rec = store.revoke_analyst(args.fingerprint, args.reason, actor)
    if args.json:
        _print_json(rec.to_dict())
    else:
        print(f"revoked {rec.fingerprint} of {rec.name} at {rec.revoked_at} by {rec.revoked_by}")
    return 0


def _list(args: argparse.Namespace) -> int:
    from workbench.casefile import CaseStore

    with CaseStore.open(args.store) as store:
        analysts = store.list_analysts()
    if args.json:
        _print_json([a.to_dict() for a in analysts])
        return 0
    if not analysts:
        print("no analysts registered", file=sys.stderr)
        return 0
    for a in analysts:
        state = f"revoked {a.revoked_at} ({a.revoked_reason})" if a.revoked_at else a.status
        print(
            f"{a.fingerprint}  {a.name}  [{a.role}]  registered {a.registered_at}  {state}  "
            f"provenance: {a.provenance_text}"
        )
    return 0


def _trust(args: argparse.Namespace) -> int:
    from workbench.casefile import CaseStore

    with CaseStore.open(args.store) as store:
        rec = store.trust_analyst(args.fingerprint, args.by, args.reason)
    if args.json:
        _print_json(rec.to_dict())
    else:
        print(f"trusted {rec.fingerprint} of {rec.name}: {rec.provenance_text}")
    return 0


def _log(args: argparse.Namespace) -> int:
    from workbench.casefile import CaseStore

    with CaseStore.open(args.store) as store:
        events = store.key_events(args.fingerprint)
    if args.json:
        _print_json(events)
        return 0
    for e in events:
        reason = f"  reason: {e['reason']}" if e.get("reason") else ""
        print(
            f"#{e['seq']}  {e['at']}  {e['kind']:<10}  {e['fingerprint']}  by {e['actor']}{reason}"
        )
    return 0
