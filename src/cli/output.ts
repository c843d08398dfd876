/**
 * Command-line output: one-line errors with exit code 2, progress on terminals, plain lines otherwise.
 * @module
 */
import cliProgress from "cli-progress";
import { EbbflowError } from "../errors/index.js";

/** An error in a command's arguments, reported as one line with exit code 2. */
export class UsageError extends Error {}

/** Runs a command action; on failure prints one clear line (a stack trace only with --debug) and exits with 2. */
export function guard<A extends unknown[]>(action: (...args: A) => Promise<void>): (...args: A) => Promise<void> {
  return async (...args: A) => {
    try {
      await action(...args);
    } catch (e) {
      const debug = process.argv.includes("--debug");
      if (e instanceof EbbflowError) {
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
