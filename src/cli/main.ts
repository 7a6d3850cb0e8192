#!/usr/bin/env node
import { formatError } from "../errors.js";
import { runCli } from "./program.js";

runCli(process.argv.slice(2)).then(
  (code) => {
    process.exitCode = code;
  },
  (err) => {
    process.stderr.write(formatError(err) + "\n");
    process.exitCode = 1;
  },
);
