/** The first studies `spindrift new external-program-2d` and `external-program-3d` write (see `EngineStarter`). */
import type { EngineStarter } from "../contract.ts";

const ABOUT =
  "Runs your own simulation program once per realisation and reads what it writes like imported " +
  "data. As written it starts `node my-simulation.mjs` next to this file (node is on PATH wherever spindrift runs, so " +
  "`spindrift check` passes): replace program and args with your program, seed its random numbers from " +
  "{seed} only, and make it write one row per object per record time. `spindrift check` prints the exact " +
  "command of the first realisation.";

const command = (output: string) =>
  `command:
  program: node # a name on PATH, or a path relative to this file; spindrift may start exactly this program
  args: # one item per argument, no shell; quote placeholders (YAML reads {…} as a map)
    - "{studydir}/my-simulation.mjs" # the program runs in its own work folder: name files by absolute path
    - --seed
    - "{seed}" # the realisation's 64-bit seed
    - --strength
    - "{param.strength}" # a value from parameters below
    - --duration
    - "{run.duration}"
    - --dt
    - "{run.sampleInterval}"
    - --out
    - "{output}" # absolute path of output.file in the realisation's work folder
  version: my-simulation 0.1 # change it whenever the program changes: old and new results never mix
parameters: # free-form values for your program; sweep them as parameters.<name>
  strength: 1.0
output:
  file: ${output} # what the program writes, relative to its work folder (columns as spindrift export writes)
# units: { length: um, time: ms }  # what one study unit is, when the program's output has units
timeoutSeconds: 3600 # per realisation; then SIGTERM, and SIGKILL 5 s later
`;

export const EXTERNAL_2D_STARTER: EngineStarter = {
  about: ABOUT + " 2D: columns t, id, x, y, circulation.",
  question:
    "What effective diffusion coefficient does our own simulation program give for the vortex cluster?",
  parameters: command("tracks.csv"),
  realisations: 20,
  run: { duration: 10, sampleInterval: 0.1, unit: "the program's time unit" },
};

export const EXTERNAL_3D_STARTER: EngineStarter = {
  about: ABOUT + " 3D: columns t, loop, x, y, z (and order, id, marker).",
  question: "What effective diffusion coefficient does our own filament program give for the tangle?",
  parameters: command("snapshots.csv") +
    "coreRadius: 1.0e-4 # vortex core parameter a₀ in study length units (ring-speed check)\n",
  realisations: 20,
  run: { duration: 10, sampleInterval: 0.1, unit: "the program's time unit" },
};
