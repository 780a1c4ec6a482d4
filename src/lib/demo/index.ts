// The invented demo scenario (pure and deterministic): for the database seed, fixtures and tests.
export { demoScenario, COMPANY, DEFAULT_SEED, SUPPLIERS, INSTRUMENTS, TREE_ROWS } from './scenario';
export type { DemoScenario, DemoMaterial, DemoClass, DemoSupplier, DemoInstrument, DemoLibraryRow, DemoLot, DemoLotFile, DemoFile } from './scenario';
export { writeJcampAffn, writeJcampDifDup, sqz, dif, dup } from './jcamp-writer';
export type { JcampSpectrum } from './jcamp-writer';
export { writeCsvMatrix } from './csv-writer';
export { createRng, mulberry32 } from './prng';
export type { Rng } from './prng';
export { addBands, NIR, RAMAN } from './bands';
export type { Band } from './bands';
export { treeLibrary, TREE_CLASSES } from './tree-library';
export type { TreeLibraryRow } from './tree-library';
