/** The first studies `spindrift new imported-tracks-2d` and `imported-filaments-3d` write (see `EngineStarter`). */
import type { EngineStarter } from "../contract.ts";

const ABOUT =
  "Reads realisations that were computed or measured elsewhere, one file per realisation, and puts " +
  "them through the same classification, database, analysis and report as spindrift's own engines. Point " +
  "source.files at your files and map their columns; a file written by `spindrift export` needs no mapping. " +
  "`spindrift check` reads no data: `spindrift run` reports the first file, row and column that cannot be read.";

const UNITS = `# units:  # what one study unit is; columns with a unit are converted to it
#   length: { value: 1, unit: um }
#   time: { value: 1, unit: ms }      # or kappa: … to measure time in ℓ²/κ
timing:
  origin: first-record # frame 0 is each file's first record (or zero: t = 0 in the files)
`;

export const TRACKS_2D_STARTER: EngineStarter = {
  about: ABOUT,
  question:
    "What is the effective diffusion coefficient of the vortex cluster in these tracks, and how many " +
    "vortices leave it?",
  parameters: `source:
  files: tracks/r{index}.csv # realisation i reads tracks/r<i>.csv, relative to this file ({number} counts from 1)
columns: # the column of each field in the files (these are the defaults, as written by spindrift export)
  t: t # time
  id: id # vortex id, persistent along its track
  x: x
  y: y # positions; e.g. { name: x_um, unit: um } converts µm to the study unit
  circulation: circulation # in κ, or { name: sign, unit: sign } for ±1
${UNITS}`,
  realisations: 20,
  run: { duration: 10, sampleInterval: 0.1, unit: "the study time unit" },
  classification: "Free walkers or tracer data form no dipoles: raise radiusFactor if far members are " +
    "labelled stray.",
};

export const FILAMENTS_3D_STARTER: EngineStarter = {
  about: ABOUT,
  question:
    "What is the effective diffusion coefficient of the tangle in these snapshots, and how many loops " +
    "leave it?",
  parameters: `source:
  files: snapshots/r{index}.csv # realisation i reads snapshots/r<i>.csv, relative to this file
columns: # the column of each field (these are the defaults, as written by spindrift export)
  t: t
  loop: loop # loop id
  x: x
  y: y
  z: z
  order: order # position along the loop (or null: rows of a loop are in order)
  id: id # point id, persistent for markers
  marker: marker # 1 for Lagrangian markers (their displacement gives the MSD)
coreRadius: 1.0e-4 # vortex core parameter a₀ in study length units (for the ring-speed check)
${UNITS}`,
  realisations: 20,
  run: { duration: 10, sampleInterval: 0.1, unit: "the study time unit" },
};
