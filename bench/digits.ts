/**
 * Handwritten digits (the mnist package's 10,000 images, split 8,000 / 2,000 in its fixed order):
 * 784-256-10 trained with Equilibrium Propagation and with backprop; held-out accuracy and seconds per
 * epoch. Uses the fastest kernels the engine offers. Target from the shared design: EqProp >= 92% held
 * out after a few epochs.
 */
import { buildNetwork, Trainer, selectBackend, type RuleConfigInput } from "../src/index.js";
import { mnistDataset } from "../src/node/index.js";

const EPOCHS = Number(process.env.EBBFLOW_DIGIT_EPOCHS ?? 12);

export async function run(): Promise<void> {
  const { train, test } = await mnistDataset({ train: 8000, test: 2000 });
  const backend = selectBackend("auto");
  console.log(`digits: ${train.size} training and ${test.size} held-out images; kernels ${backend.name}; ${EPOCHS} epochs, batch 10, cosine schedule`);
  const cases: [string, RuleConfigInput, "rate"][] = [
    ["eqprop (one-sided), β = 0.3; rate 0.7, 1.5 on image->hidden; cosine schedule", { rule: "eqprop", beta: 0.3, rate: 0.7, rates: { "image->hidden": 1.5 } }, "rate"],
    ["backprop", { rule: "backprop", rate: 0.5 }, "rate"],
  ];
  console.log("| rule | epoch | held-out accuracy | training accuracy | seconds per epoch |");
  console.log("| --- | --- | --- | --- | --- |");
  for (const [label, rule] of cases) {
    const net = buildNetwork(
      {
        seed: 1,
        dtype: "float32",
        layers: [
          { name: "image", size: 784, role: "input" },
          { name: "hidden", size: 256, role: "hidden" },
          { name: "digit", size: 10, role: "output" },
        ],
        connections: [
          { from: "image", to: "hidden", feedback: { kind: "tied", gain: 1 } },
          { from: "hidden", to: "digit", feedback: { kind: "tied", gain: 1 } },
        ],
        dynamics: { dt: 0.5, maxSteps: 40, tolerance: 1e-4 },
      },
      { backend },
    );
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
