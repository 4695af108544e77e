"""``aligner sweep``: align at several alphas with every option of ``align``; tabulate and draw the trade-off."""

from __future__ import annotations

import math

from aligner.cli.commands.align import NetworkA, NetworkB
from aligner.cli.options import Alphas, Force, Out, Prior, Quiet, Seeds, Truth, Use, command
from aligner.cli.runtime import check_inputs, check_option_combinations, err, out, say
from aligner.config import AlignConfig
from aligner.errors import InvalidParameterError


def alpha_list(text: str | None) -> list[float] | None:
    """The values of ``--alphas`` (None: the sweep's default grid, when the option is left out).

    A value holding no number (``--alphas ""``, an unset shell variable in ``--alphas "$A"``) is
    refused, not taken for the default grid: the option is left out for that.
    """
    if text is None:
        return None
    bad = InvalidParameterError(f"alphas must be comma-separated numbers such as 0,0.5,0.9; got {text!r}",
                                param="alphas")
    try:
        values = [float(t) for t in text.replace(" ", "").split(",") if t]
    except ValueError:
        raise bad from None
    if not values:
        raise bad
    return values


@command(Use(AlignConfig, exclude=("alpha",)))
def sweep(network_a: NetworkA, network_b: NetworkB, outdir: Out, prior: Prior = None, alphas: Alphas = None,
          truth: Truth = None, seeds: Seeds = None, force: Force = False, quiet: Quiet = False, *,
          config: AlignConfig):
    """Align at several alphas with one prepared problem; write sweep.tsv, sweep.png and sweep.svg to --out.

    Every row is what align returns at that alpha with the same options.
    """
    values = alpha_list(alphas)
    check_inputs(network_a, network_b, prior, truth, seeds)
    check_option_combinations(config, prior=prior, seeds=seeds)
    from aligner.analysis.sweep import DEFAULT_ALPHAS, KNEE_RULE
    from aligner.analysis.sweep import sweep as run_sweep
    from aligner.io.outputs import SWEEP_TABLE, check_outdir, write_sweep_outputs
    from aligner.render.console import sweep_lines, sweep_table
    from aligner.render.figures import plot_sweep

    check_outdir(outdir, force=force, files=(SWEEP_TABLE,))  # refuse before any work, not after it
    report = (lambda a: None) if quiet else (lambda a: say(f"alpha {a:g}", console=err))
    res = run_sweep(network_a, network_b, prior, alphas=DEFAULT_ALPHAS if values is None else values, seeds=seeds,
                    truth=truth, config=config, progress=report)
    figures = {f"sweep.{fmt}": data for fmt, data in plot_sweep(res.table, res.knee).items()}
    written = write_sweep_outputs(outdir, res.table, figures, force=force)
    if not quiet:
        out.print(sweep_table(res.table))
        finite = all(math.isfinite(w) for w in res.table["prior_weight"])
        for line in sweep_lines(res.knee_alpha, KNEE_RULE, written, weights_finite=finite):
            say(line)
