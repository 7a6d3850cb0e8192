import type { Command } from "commander";
import { parseMoves, runRetuneCommand } from "../../app/retune.js";
import { parseLayoutRange } from "../../env/layout-spec.js";
import { drawStates } from "../../audit/draw.js";
import { EXIT } from "../../errors.js";
import { fmtInterval } from "../../tune/run.js";
import { action, intOption, numberOption, type CliContext } from "../context.js";
import { emit, paint, table, useColor } from "../io.js";
import { STATIC_CAUTION } from "../caution.js";
import { envOption, jsonOption, maxStatesOf, maxStatesOption, reportOf, reportOption, rewardOption, runsDirOf, runsDirOption } from "../options.js";

interface RetuneFlags {
  env: string;
  reward?: string;
  move: string;
  tuneOn: string;
  holdOut: string;
  budget?: string;
  seed?: string;
  failOnHoldout?: string;
  threads?: string;
  maxStates?: string;
  json?: boolean;
  report?: boolean | string;
  runsDir?: string;
}

export function registerRetune(program: Command, ctx: CliContext): void {
  program
    .command("retune")
    .description("tune reward weights on some layouts of a family until the designer-optimal policy is intent-optimal on each, then test them on held-out layouts")
    .addOption(envOption())
    .addOption(rewardOption().makeOptionMandatory(false))
    .requiredOption("--move <features>", "features allowed to move and their bounds: name=lo:hi[,name=lo:hi...]")
    .requiredOption("--tune-on <range>", "tuning layouts, e.g. 1-5 or 0,3,7")
    .requiredOption("--hold-out <range>", "held-out layouts, disjoint from the tuning ones, e.g. 100-199")
    .option("--budget <n>", "most coordinate rounds of the search, across restarts (default 20)")
    .option("--seed <n>", "seed of the random restarts (default 0)")
    .option("--threads <n>", "worker threads for the held-out evaluation when there are more than 50 held-out layouts (default: the machine's cores; 1 = no threads)")
    .option("--fail-on-holdout <rate>", "exit 3 when the share of held-out layouts that game is above this rate")
    .addOption(reportOption("an HTML page: regretNorm per held-out layout and the worst layout's map", "<runs-dir>/retune-<env>.html"))
    .addOption(runsDirOption("where --report goes by default"))
    .addOption(maxStatesOption())
    .addOption(jsonOption())
    .action(
      action(ctx, async (opts: RetuneFlags) => {
        const failAt = opts.failOnHoldout === undefined ? undefined : numberOption(opts.failOnHoldout, "--fail-on-holdout", { min: 0, max: 1 });
        const { doc, worstModel, worstRoute } = await runRetuneCommand({
          env: opts.env,
          reward: opts.reward,
          move: parseMoves(opts.move),
          tuning: parseLayoutRange(opts.tuneOn, "--tune-on"),
          holdout: parseLayoutRange(opts.holdOut, "--hold-out"),
          budget: intOption(opts.budget, "--budget", { min: 1, max: 10_000, def: 20 }),
          seed: intOption(opts.seed, "--seed", { min: 0, def: 0 }),
          maxStates: maxStatesOf(opts),
          threads: opts.threads === undefined ? undefined : intOption(opts.threads, "--threads", { min: 1, max: 256 }),
          report: reportOf(ctx.io, opts.report),
          runsDir: runsDirOf(ctx.io, opts),
        });
        emit(ctx.io, Boolean(opts.json), doc, () => {
          const color = useColor(ctx.io);
          const h = doc.holdout;
          const pct = (x: number) => `${(100 * x).toFixed(0)}%`;
          let text = `${paint(color, "bold", doc.env)}  from ${paint(color, "bold", doc.reward)}: tuned on ${doc.tuning.layouts.length} layouts (largest regretNorm ${doc.tuning.maxRegretNorm.toFixed(3)}${doc.search.accepted ? "" : ", not accepted"}), held out ${h.layouts.length}\n\n`;
          text += table(
            ["feature", "tuned weight", "interval over tuning layouts", "constrained", "likely cause", "layouts to add"],
            doc.features.map((f) => [f.name, f.weight, fmtInterval(f.interval), f.constrained ? "yes" : "no", f.likelyCause ? "yes" : "", f.suggest.join(" ")]),
            { color },
          );
          const line = `held-out layouts gamed (regretNorm >= ${h.gamingAt}): ${h.gaming} of ${h.layouts.length} = ${pct(h.gamingRate)} (95% Wilson ${pct(h.ci.lower)}-${pct(h.ci.upper)})`;
          text += `\n${h.gaming > 0 ? paint(color, "red", line) : paint(color, "green", line)}\n`;
          if (h.worst && h.worst.regretNorm > 0) {
            text += `worst: layout ${h.worst.layout}, regretNorm ${h.worst.regretNorm.toFixed(3)}`;
            if (h.worst.divergence) text += `; leaves the intended route at ${h.worst.divergence.state}: ${h.worst.divergence.designerAction} where ${h.worst.divergence.intentAction} is intended`;
            text += "\n";
            const pic = worstModel ? drawStates(worstModel, worstRoute, "x") : null;
            if (pic) {
              // The layout beside the route (x), so what the route runs over stays visible.
              const lay = worstModel?.layout;
              const left = lay?.kind === "grid" ? lay.map : [];
              const right = pic.replace(/\n$/, "").split("\n");
              const width = Math.max(0, ...left.map((l) => l.length));
              for (let i = 0; i < Math.max(left.length, right.length); i++) text += `    ${(left[i] ?? "").padEnd(width)}${left.length ? "   " : ""}${right[i] ?? ""}\n`;
            }
          }
          for (const d of doc.diagnosis) text += `- ${d}\n`;
          text += `\nExact solves on every layout. ${STATIC_CAUTION}\n`;
          return text;
        });
        if (!opts.json && doc.report) ctx.io.err(`report: ${doc.report}\n`);
        if (failAt !== undefined && doc.holdout.gamingRate > failAt) return EXIT.gate;
        return EXIT.ok;
      }),
    );
}
