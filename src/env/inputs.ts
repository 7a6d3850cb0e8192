/**
 * Content hashes of a run's inputs, so run ids and job ids are content-addressed: editing a model
 * file, a reward file, a simulator module or a local file the module imports gives a new id.
 *
 * Hashed: the text of the `--env` file (model file or module), of a `--reward` file, and of every
 * local file a module imports through a relative specifier (a static import, a dynamic import or a
 * require of a path starting with ./ or ../), followed recursively up to MAX_INPUT_FILES files; plus gapwatch's version.
 * Built-in scenarios are package files: the package version stands for them (no file entry).
 * Package imports (bare specifiers) are not followed: their versions are the lockfile's business;
 * neither are imports of gapwatch's own source (`src/`, `dist/`): the version stands for them.
 *
 * The digest (`hash`) covers each file's role (env / reward / the import path relative to the
 * module's folder) and SHA-256, never its absolute path, so the same files in another folder (a
 * worker's scratch copy) give the same digest.
 */
import { createHash } from "node:crypto";
import { existsSync, readFileSync, statSync } from "node:fs";
import { dirname, relative, resolve } from "node:path";
import { canonicalJson } from "../util/canonical-json.js";
import { packageRoot, packageVersion } from "../util/paths.js";
import type { InputFile, RunInputs } from "../run/schema.js";
import { splitLayout } from "./layout-spec.js";
import { fileFamily } from "./resolve.js";

export type { InputFile, RunInputs };

/** Most files one run's inputs follow (the module and its local imports). */
export const MAX_INPUT_FILES = 200;

const MODULE_EXT = /\.(m|c)?[jt]sx?$/i;
const TRY_EXT = ["", ".ts", ".js", ".mts", ".mjs", ".cts", ".cjs", ".tsx", ".jsx", "/index.ts", "/index.js"];
const SPECIFIER = /(?:\bfrom\s*|\bimport\s*\(\s*|\bimport\s+|\brequire\s*\(\s*)["'](\.{1,2}\/[^"'\n]+)["']/g;

const sha = (data: string | Buffer) => createHash("sha256").update(data).digest("hex");

function isFile(p: string): boolean {
  try {
    return statSync(p).isFile();
  } catch {
    return false;
  }
}

/** Resolve a relative import the way the loaders do, allowing `.js` written for a `.ts` source. */
function resolveImport(from: string, spec: string): string | null {
  const base = resolve(dirname(from), spec);
  for (const ext of TRY_EXT) if (isFile(base + ext)) return base + ext;
  const swapped = base.replace(/\.(m|c)?js$/i, (_m, p: string | undefined) => `.${p ?? ""}ts`);
  if (swapped !== base && isFile(swapped)) return swapped;
  return null;
}

/** The relative local imports of a module, recursively (bounded), in a stable order. */
export function localImports(moduleFile: string, max = MAX_INPUT_FILES): string[] {
  const root = resolve(moduleFile);
  const pkg = packageRoot();
  const own = [resolve(pkg, "src") + "/", resolve(pkg, "dist") + "/"];
  const seen = new Set<string>([root]);
  const queue = [root];
  const out: string[] = [];
  while (queue.length > 0) {
    const file = queue.shift() as string;
    const text = readFileSync(file, "utf8");
    for (const m of text.matchAll(SPECIFIER)) {
      const dep = resolveImport(file, m[1]);
      if (!dep || seen.has(dep) || (!MODULE_EXT.test(dep) && !/\.json$/i.test(dep)) || own.some((o) => dep.startsWith(o))) continue;
      if (seen.size >= max) return out.sort();
      seen.add(dep);
      out.push(dep);
      if (MODULE_EXT.test(dep)) queue.push(dep);
    }
  }
  return out.sort();
}

function entry(role: string, file: string): InputFile {
  const data = readFileSync(file);
  return { role, path: file, sha256: sha(data), bytes: data.length };
}

/**
 * Hash the inputs of a run: `envFile` is the model file or module (null for a built-in scenario),
 * `rewardFile` a reward file (null for a variant name).
 */
export function hashInputs(envFile: string | null, rewardFile: string | null, version = packageVersion()): RunInputs {
  const files: InputFile[] = [];
  if (envFile !== null) {
    const env = resolve(envFile);
    files.push(entry("env", env));
    if (MODULE_EXT.test(env)) for (const dep of localImports(env)) files.push(entry(relative(dirname(env), dep).split("\\").join("/"), dep));
  }
  if (rewardFile !== null) files.push(entry("reward", resolve(rewardFile)));
  const hash = sha(canonicalJson({ gapwatch: version, files: files.map((f) => [f.role, f.sha256]) }));
  return { files, gapwatch: version, hash };
}

/**
 * The inputs of a run given its `--env` and `--reward` specs as the user wrote them. A layout suffix
 * (`<env>#<N>`, layout-spec.ts) is part of the env spec, hence of the run id; the file hashed is the
 * module, or the N-th model file of a folder or list family.
 */
export function inputsOf(envSpec: string, envIsFile: boolean, rewardSpec: string | undefined, rewardIsVariant: boolean): RunInputs {
  const rewardFile = rewardSpec !== undefined && !rewardIsVariant && /\.json$/i.test(rewardSpec) && existsSync(resolve(rewardSpec)) ? rewardSpec : null;
  const { base, layout } = splitLayout(envSpec);
  const family = envIsFile ? fileFamily(base) : null;
  const envFile = family ? (family[layout] ?? null) : base;
  return hashInputs(envIsFile ? envFile : null, rewardFile);
}
