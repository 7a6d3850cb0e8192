// A child process for tests/store/atomic-runs.test.ts: one training run into a runs folder, printing
// "checkpoint <step>" after every checkpoint so the parent can kill it mid-run.
import { runTraining } from "../../../src/train/run.js";

const [runsDir, env, reward, steps, checkpoints] = process.argv.slice(2);
await runTraining(
  { env, reward, seed: 1, steps: Number(steps), checkpoints: Number(checkpoints) },
  { runsDir, sync: true, onProgress: (p) => process.stdout.write(`checkpoint ${p.step}\n`) },
);
process.stdout.write("done\n");
