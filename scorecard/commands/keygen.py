"""`scorecard keygen`: make an approver's Ed25519 key pair for `scorecard approve`."""

from __future__ import annotations

from pathlib import Path

import click

from scorecard.commands._common import say
from scorecard.errors import UserError
from scorecard.jsondoc import atomic_write_bytes
from scorecard.sheet.approval import new_private_key, public_fingerprint_of, public_key_bytes, write_private_key


@click.command()
@click.option("-o", "--output", required=True, type=click.Path(), metavar="APPROVER.pem",
              help="Private key file to create (readable by you only); the public key is written beside it as APPROVER.pub.")
def command(output: str) -> None:
    """Make an approver's key pair (Ed25519): a private key to approve sheets with, and its public key.

    \b
    APPROVER.pem  the private key: only its holder can approve. Keep it secret (it is created
                  readable by you only, 0600) and never send it; lose it and make a new pair.
    APPROVER.pub  the public key: give it to everyone who checks sheets (`check`, `verify`,
                  `score` with --approved-by APPROVER.pub).
    Existing files are never replaced.

    \b
    Example:
      scorecard keygen -o approver.pem
      scorecard approve sheet.json --key approver.pem --name "Dr A. Example, ward methodologist" -o approved.sheet.json
    """
    private = Path(output)
    if not private.name.lower().endswith(".pem"):
        raise UserError(f"{private}: the private key file must end in .pem; give -o NAME.pem")
    public = private.with_suffix(".pub")
    parent = private.parent if str(private.parent) else Path(".")
    if not parent.is_dir():
        raise UserError(f"{private}: folder {parent} does not exist; create it or choose another -o path")
    for path in (private, public):
        if path.exists():
            raise UserError(f"{path}: already exists; a key file is never overwritten (choose another -o name)")
    key = new_private_key()
    write_private_key(private, key)
    try:
        atomic_write_bytes(public, public_key_bytes(key.public_key()))
    except BaseException:
        private.unlink(missing_ok=True)
        raise
    say(f"wrote {private} (private key, readable by you only: keep it secret) and {public} (public key, "
        f"fingerprint {public_fingerprint_of(key.public_key())}: give it to whoever checks your sheets)")
