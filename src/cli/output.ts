/**
 * Command-line output: one-line errors with exit code 2, progress on terminals, plain lines otherwise.
 * @module
 */
import cliProgress from "cli-progress";
import { EbbflowError } from "../errors/index.js";

/** An error in a command's arguments, reported as one line with exit code 2. */
export class UsageError extends Error {}

/** Whether the command line asks for machine-readable output (errors are then one JSON object too). */
export function jsonErrorsRequested(argv: readonly string[] = process.argv): boolean {
  const end = argv.indexOf("--");
  return (end < 0 ? argv : argv.slice(0, end)).includes("--json");
}

/**
 * The JSON form of an error, written as one line to stderr with --json:
 * `{"error":{"code","path","expected","received","message","issues":[...]}}` (`code` is `usage` for
 * argument errors, `error` for unexpected ones).
 */
export function errorJson(e: unknown): string {
  if (e instanceof EbbflowError) {
    return JSON.stringify({ error: { code: e.code, path: e.path, expected: e.expected, received: e.received, message: e.message, issues: e.issues.slice(0, 100) } });
  }
  return JSON.stringify({ error: { code: e instanceof UsageError ? "usage" : "error", path: "", message: (e as Error)?.message ?? String(e) } });
}

/** Writes commander's own argument errors: as they are, or as one JSON object with --json. */
export function writeCommanderError(text: string, write: (s: string) => void): void {
  if (jsonErrorsRequested()) write(JSON.stringify({ error: { code: "usage", path: "", message: text.trim().replace(/^error: /, "") } }) + "\n");
  else write(text);
}

/**
 * Output to a closed pipe (`ebbflow sweep list | head`) ends the process quietly with code 0 instead of an
 * EPIPE stack trace; other stream errors are reported as one line.
 */
export function handleOutputErrors(): void {
  // once per process (the command's module may be evaluated more than once in one process, as in the fuzz suite)
  const flag = Symbol.for("ebbflow.outputErrorsHandled");
  const g = globalThis as Record<symbol, unknown>;
  if (g[flag] === true) return;
  g[flag] = true;
  for (const stream of [process.stdout, process.stderr]) {
    stream.on("error", (e: NodeJS.ErrnoException) => {
      if (e.code === "EPIPE") process.exit(process.exitCode ?? 0);
      try {
        process.stderr.write(`ebbflow: output failed: ${e.message}\n`);
      } finally {
        process.exit(2);
      }
    });
  }
}

/** Runs a command action; on failure prints one clear line (one JSON object with --json; a stack trace only with --debug) and exits with 2. */
export function guard<A extends unknown[]>(action: (...args: A) => Promise<void>): (...args: A) => Promise<void> {
  return async (...args: A) => {
    try {
      await action(...args);
    } catch (e) {
      const debug = process.argv.includes("--debug");
      if (jsonErrorsRequested()) process.stderr.write(errorJson(e) + "\n");
      else if (e instanceof EbbflowError) {
        const lines = e.issues.length > 1 ? e.message.split("\n") : [e.message];
        process.stderr.write(`ebbflow: ${lines.join("\n  ")}\n`);
      } else process.stderr.write(`ebbflow: ${(e as Error).message ?? String(e)}\n`);
      if (debug) process.stderr.write(`${(e as Error).stack ?? ""}\n`);
      process.exitCode = 2;
    }
  };
}

/** Progress of a long run: a bar on a terminal, a line every so often otherwise, nothing in --json mode. */
export class Progress {
  private bar: cliProgress.SingleBar | null = null;
  private lastLine = 0;
  constructor(private readonly total: number, private readonly label: string, private readonly quiet: boolean) {
    if (!quiet && process.stderr.isTTY) {
      this.bar = new cliProgress.SingleBar({ format: `${label} [{bar}] {value}/{total} {status}`, stream: process.stderr, hideCursor: true }, cliProgress.Presets.shades_classic);
      this.bar.start(total, 0, { status: "" });
    }
  }

  update(value: number, status: string): void {
    if (this.bar !== null) this.bar.update(value, { status });
    else if (!this.quiet) {
      const now = Date.now();
      if (now - this.lastLine > 2000 || value === this.total) {
        process.stderr.write(`${this.label} ${value}/${this.total} ${status}\n`);
        this.lastLine = now;
      }
    }
  }

  stop(): void {
    this.bar?.stop();
  }
}
