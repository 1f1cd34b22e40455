"""`scorecard approve`: sign a sheet document, with the bound it promises, as its approver."""

from __future__ import annotations

import click

from scorecard.commands._common import output_path, say
from scorecard.sheet import load_sheet, save_sheet
from scorecard.sheet.approval import load_private_key, sign_sheet, signature_short


@click.command()
@click.argument("sheet_path", metavar="SHEET.json", type=click.Path())
@click.option("--key", "key_path", required=True, type=click.Path(), metavar="APPROVER.pem",
              help="The approver's private key (from `scorecard keygen`).")
@click.option("--name", required=True, metavar="TEXT", help="The approver's name and role, printed on every page of the sheet.")
@click.option("-o", "--output", required=True, type=click.Path(), metavar="APPROVED.sheet.json", help="The approved sheet to write.")
def command(sheet_path: str, key_path: str, name: str, output: str) -> None:
    """Approve SHEET.json: sign it, with the accuracy bound it promises, your name and the time.

    The signature (Ed25519) covers the whole sheet except its fingerprint, its bound, the name and
    the time (UTC); any later change to any of them makes `check`, `verify` and `score` with
    --approved-by APPROVER.pub refuse the sheet (exit 3). The approved sheet prints the approver
    and the signature's short fingerprint on every page (render it again after approving).
    Approve only a sheet you have checked (`scorecard check`) and whose bound you accept: the
    bound is shown here before it is signed.

    \b
    Example:
      scorecard approve sheet.json --key approver.pem --name "Dr A. Example, ward methodologist" -o approved.sheet.json
    """
    out = output_path(output, sheet_path, key_path)
    sheet = load_sheet(sheet_path)
    key = load_private_key(key_path)
    approved = sign_sheet(sheet, key, name)
    fingerprint = save_sheet(approved, out, protect=(sheet_path, key_path))
    a = approved["approval"]
    bound = ", ".join(f"{k} {v}" for k, v in sorted(a["bound"].items()) if v is not None)
    say(f"approved by {a['name']} at {a['approved_at']} with key {a['key_fingerprint']}; signature {signature_short(a)}")
    say(f"the approved bound: {bound}")
    say(f"wrote {out} (sheet fingerprint {fingerprint[:12]}); render it again so the print shows the approval")
