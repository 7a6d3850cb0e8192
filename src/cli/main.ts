#!/usr/bin/env node
import { formatError } from "../errors.js";
import { packageVersion } from "../util/paths.js";

const argv = process.argv.slice(2);
// `--version` alone answers before the commands (and what they load) are imported: quick start-up.
const run: Promise<number> =
  argv.length === 1 && (argv[0] === "--version" || argv[0] === "-V")
    ? Promise.resolve(process.stdout.write(packageVersion() + "\n")).then(() => 0)
    : import("./program.js").then(({ runCli }) => runCli(argv));
run.then(
  (code) => {
    process.exitCode = code;
  },
  (err) => {
    process.stderr.write(formatError(err) + "\n");
    process.exitCode = 1;
  },
);
