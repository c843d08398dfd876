#!/usr/bin/env node
/**
 * The `ebbflow` command.
 * @module
 */
import { Command, Option } from "commander";
import { guard, handleOutputErrors, jsonErrorsRequested, writeCommanderError } from "./output.js";
import { intOption, numberOption } from "./numbers.js";
import { trainCommand } from "./train.js";
import { checkCommand } from "./check.js";
import { plotCommand } from "./plot.js";
import { demoCommand } from "./demo.js";
import { benchCommand } from "./bench.js";
import { VERSION } from "./version.js";
import { registerSweep } from "./sweep.js";
import { registerExport } from "./export.js";

// strict decimal parsing with each option's range (see numbers.ts): "0x3" or "-0.5" are refused, not reinterpreted
const int = (name: string) => intOption(name, 1);
const num = (name: string) => numberOption(name);
const positive = (name: string) => numberOption(name, { min: 0, openMin: true, what: "a number > 0" });
const collect = (v: string, prev: string[] = []) => [...prev, v];

handleOutputErrors();
const program = new Command();
program
  .name("ebbflow")
  .description("Biologically constrained, error-driven learning: train, verify and compare local learning rules.")
  .version(VERSION)
  .option("--debug", "print stack traces on errors")
  .showHelpAfterError(jsonErrorsRequested() ? false : "(add --help for usage)")
  .configureOutput({ outputError: (text, write) => writeCommanderError(text, write) })
  .exitOverride((err) => {
    // commander's own argument errors: one line, exit code 2
    process.exit(err.exitCode === 0 ? 0 : 2);
  });

program
  .command("train")
  .description("train a model (experiment file, network declaration or saved model) and write results, weights and checkpoints")
  .argument("<model>", "MODEL.json")
  .option("--data <source>", "touch-strip, xor, parity:N, oriented-bars[:N], iris, digits[:N] or a .csv/.json file")
  .option("--rule <rule>", "rule name, inline JSON or a JSON file (default: the experiment's first rule)")
  .option("--rate <rate>", "learning rate (with a bare rule name)", positive("--rate"))
  .option("--beta <beta>", "nudging strength, for rules that have one (with a bare rule name)", num("--beta"))
  .option("--epochs <n>", "number of epochs", int("--epochs"))
  .option("--batch-size <n>", "mini-batch size", int("--batch-size"))
  .option("--seed <seed>", "seed for shuffling and the split (default: the network's seed)")
  .option("--test-fraction <f>", "fraction held out for testing, in [0, 0.9]", numberOption("--test-fraction", { min: 0, max: 0.9 }))
  .option("--split-column <column>", "fixed split: the CSV column (name or index) that says train or test on every row")
  .option("--train-index <file>", "fixed split: the training rows (0-based indices; with --test-index)")
  .option("--test-index <file>", "fixed split: the test rows (0-based indices; with --train-index)")
  .option("--scale", "scale inputs to [0, 1] using the training split")
  .option("--persistent", "start each example's free phase from its last settled state")
  .option("--persistent-test", "start each held-out example's free phase from its last settled state (needs a test set)")
  .option("--out <dir>", "output folder (results.jsonl, model.json, checkpoint.json)")
  .option("--checkpoint-every <n>", "epochs between checkpoints", int("--checkpoint-every"))
  .option("--resume", "continue from the output folder's checkpoint (same experiment)")
  .option("--accept-changes", "with --resume: continue although the experiment changed (recorded in the results)")
  .option("--overwrite", "replace the run in a non-empty output folder")
  .addOption(new Option("--kernels <kind>", "kernels: auto (WebAssembly SIMD when the engine has it), typescript or wasm").choices(["auto", "typescript", "wasm"]).default("auto"))
  .option("--plugin <module>", "a module defining rules of your own (repeatable; also `plugins` in the experiment file)", collect)
  .option("--json", "machine-readable output")
  .action(guard(trainCommand));

program
  .command("check")
  .description("print the gradient-agreement table of each configured rule")
  .argument("<model>", "MODEL.json")
  .option("--data <source>", "data source (as for train)")
  .option("--rule <rule>", "a rule (repeatable; default: the experiment's rules)", collect)
  .option("--rate <rate>", "learning rate for bare rule names", positive("--rate"))
  .option("--beta <beta>", "nudging strength for eqprop", num("--beta"))
  .option("--examples <n>", "examples in the batch", int("--examples"))
  .addOption(new Option("--reference <kind>", "exact reference").choices(["recurrent", "finite-difference", "feedforward"]))
  .addOption(new Option("--kernels <kind>", "kernels: auto, typescript or wasm").choices(["auto", "typescript", "wasm"]).default("auto"))
  .option("--plugin <module>", "a module defining rules of your own (repeatable; also `plugins` in the experiment file)", collect)
  .option("--json", "machine-readable output")
  .action(guard(checkCommand));

program
  .command("plot")
  .description("write SVG learning curves from results files, and weight matrices or receptive fields from a saved model")
  .argument("[results...]", "RESULTS.jsonl files")
  .option("--out <file>", "SVG file to write")
  .option("--metric <name>", "sse, loss, binaryCrossEntropy, softmaxCrossEntropy, accuracy or cosine", "sse")
  .addOption(new Option("--split <split>", "which evaluation").choices(["train", "test", "both"]))
  .option("--weights <model>", "a saved model file: plot a weight matrix")
  .option("--connection <label>", "connection to plot (from->to)")
  .option("--image <WxH>", "show each unit's weights as a W×H image (receptive fields)")
  .option("--title <title>", "chart title")
  .option("--json", "machine-readable output")
  .action(guard((files: string[], o: object) => plotCommand(files, o)));

program
  .command("demo")
  .description("the touch-strip demo: why a hidden layer is needed, four local rules learning it, gradient agreement, curves")
  .option("--out <dir>", "folder for the SVG learning curves", "ebbflow-demo")
  .option("--seeds <n>", "seeds per rule", int("--seeds"), 10)
  .option("--epochs <n>", "epoch limit with a hidden layer", int("--epochs"), 1500)
  .option("--json", "machine-readable output")
  .action(guard(demoCommand));

const ints = (name: string) => (v: string, prev: number[] = []) => [...prev, int(name)(v)];

program
  .command("bench")
  .description("measure training speed (µs per example) against NumPy and TF.js in the same run; compare two reports")
  .argument("[model]", "MODEL.json (default: a 784-256-10 network)")
  .option("--out <file>", "where to write the JSON report")
  .option("--compare <files...>", "two reports to show side by side")
  .option("--seconds <s>", "seconds per measurement", positive("--seconds"))
  .option("--batch <n>", "batch size (repeatable)", ints("--batch"))
  .option("--workers <n>", "worker threads (repeatable)", ints("--workers"))
  .option("--no-peers", "skip the NumPy and TF.js peers")
  .option("--json", "machine-readable output")
  .action(guard(benchCommand));

registerSweep(program);
registerExport(program);

await program.parseAsync(process.argv);
