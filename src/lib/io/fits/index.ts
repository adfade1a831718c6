/** FITS binary tables (FITS Standard 4.0): streaming reader and deterministic writer. */
export { readFits, readFitsBatches, concatTables, type ReadFitsOptions } from './read.ts';
export { writeFits, type WriteFitsOptions } from './write.ts';
