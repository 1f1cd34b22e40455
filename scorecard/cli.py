"""The `scorecard` command: a thin click layer. Each verb lives in `scorecard/commands/<verb>.py` and exports
`command`; this module only finds them, orders them along the pipeline, and turns errors into exit codes.
"""

from __future__ import annotations

import importlib
import pkgutil
import sys

import click

from scorecard import __version__
from scorecard.errors import CheckFailed, UserError
from scorecard.outputs import force_overwrite
from scorecard.shutdown import Interrupted, end_workers, handling_signals, interrupted_line, received
from scorecard.suggest import did_you_mean

# other spellings a user may type: British "quantise" (the help speaks of quantising) for `quantize`
ALIASES = {"quantise": "quantize"}

# the order a newcomer meets the verbs in `scorecard --help`: along the pipeline
PIPELINE_ORDER = ["demo", "fit", "import", "predict", "review", "edit", "explain", "quantize", "keygen", "approve", "render", "score", "check", "verify",
                  "compare", "recalibrate", "exercise", "mark", "export"]


def _set_force(ctx: click.Context, param: click.Parameter, value: bool) -> bool:
    force_overwrite.set(bool(value))
    return value


def _with_force(command: click.Command) -> click.Command:
    """Every verb that writes files takes --force: replace an output file that is read-only (scorecard.outputs
    refuses it otherwise). Added here so the option and its wording have one home."""
    writes = any("-o" in getattr(p, "opts", ()) for p in command.params)
    if writes and not any(p.name == "force" for p in command.params):
        command.params.append(click.Option(["--force"], is_flag=True, expose_value=False, callback=_set_force,
                                           help="Replace an output file even if it is read-only."))
    return command


class PipelineGroup(click.Group):
    """Discovers verb modules lazily and reports user errors as one line with the right exit code."""

    def main(self, *args, **kwargs):
        """SIGINT/SIGTERM handled from the very start (scorecard.shutdown): one line, exit 130/143."""
        with handling_signals():
            try:
                return super().main(*args, **kwargs)
            except (Interrupted, Exception) as exc:
                signum = exc.signum if isinstance(exc, Interrupted) else received()
                if signum is None:
                    raise
                end_workers()
                click.echo(interrupted_line(signum), err=True)
                sys.exit(128 + signum)

    def _modules(self) -> list[str]:
        import scorecard.commands as pkg

        names = [m.name for m in pkgutil.iter_modules(pkg.__path__) if not m.name.startswith("_")]
        return names

    def list_commands(self, ctx: click.Context) -> list[str]:
        verbs = [m.replace("_", "-").removesuffix("-cmd") for m in self._modules()]
        return sorted(verbs, key=lambda v: (PIPELINE_ORDER.index(v) if v in PIPELINE_ORDER else 99, v))

    def get_command(self, ctx: click.Context, name: str) -> click.Command | None:
        name = ALIASES.get(name, name)
        for module_name in self._modules():
            if module_name.replace("_", "-").removesuffix("-cmd") == name:
                return _with_force(importlib.import_module(f"scorecard.commands.{module_name}").command)
        return None

    def resolve_command(self, ctx: click.Context, args: list[str]):
        """An unknown verb is one line naming the closest verbs (difflib), not click's bare 'No such command'."""
        name = args[0] if args else ""
        if name and not name.startswith("-") and self.get_command(ctx, name) is None:
            verbs = self.list_commands(ctx)
            raise click.UsageError(f"no verb {name!r}{did_you_mean(name, verbs)} (the verbs: {', '.join(verbs)})", ctx)
        return super().resolve_command(ctx, args)

    def invoke(self, ctx: click.Context):
        try:
            return super().invoke(ctx)
        except UserError as exc:
            click.echo(f"error: {exc}", err=True)
            ctx.exit(UserError.exit_code)
        except click.UsageError as exc:
            # click's own usage errors (missing -o, a value out of range) as one line too, naming the verb
            exc = _renamed_option_hint(exc)
            where = exc.ctx.command_path if exc.ctx else "scorecard"
            click.echo(f"error: {where}: {exc.format_message()} (see {where} --help)", err=True)
            ctx.exit(UserError.exit_code)
        except CheckFailed as exc:
            click.echo(f"check failed: {exc}", err=True)
            ctx.exit(CheckFailed.exit_code)


def _renamed_option_hint(exc: click.UsageError) -> click.UsageError:
    """An option a verb renamed (its command's `renamed_options`, old -> new) gets the new name as the
    did-you-mean; spelling alone would not find it ('--bags' is nothing like '--repeats')."""
    if not isinstance(exc, click.NoSuchOption) or exc.ctx is None:
        return exc
    renamed = getattr(exc.ctx.command, "renamed_options", {})
    new = renamed.get(exc.option_name.split("=", 1)[0])
    if new is None:
        return exc
    return click.UsageError(f"No such option {exc.option_name!r}; did you mean {new!r}? (renamed)", exc.ctx)


@click.group("scorecard", cls=PipelineGroup, context_settings={"help_option_names": ["-h", "--help"], "max_content_width": 100})
@click.version_option(__version__, prog_name="scorecard")
def main() -> None:
    """Turn an additive risk model into printable bedside point sheets, and prove the paper agrees.

    \b
    The pipeline, one verb per step:
      data.csv --fit--> model.json --review/edit--> model.json --quantize--> sheet.json --render--> sheet.pdf
      other model --import--^                      cohort.csv --check--> report     sheet.pdf --verify--> report

    For the ward, once a sheet is in use: compare (what changed between versions), recalibrate (the
    unit's outcomes refit the conversion), exercise and mark (hand-scoring training), export (PMML).

    Start with `scorecard demo -o DIR`, which runs the whole pipeline on an invented cohort.

    Exit codes: 0 done; 1 internal error; 2 bad input or usage (one line says which file, row or field,
    and what to do); 3 a check ran and failed its bound.

    Decision support only: a sheet does not replace clinical judgement, is valid only for the population and
    outcome it states, shows associations, not causes, and defers to local protocols and licensed clinicians.
    Check the fingerprint printed on a sheet against the approved version before use.
    """
