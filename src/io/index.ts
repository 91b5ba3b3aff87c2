/**
 * The I/O layer: the only code that touches the file system. Readers validate
 * and throw InputError (file, row, column, reason); writers are atomic and
 * never overwrite an input. Formats: docs/formats.md.
 */
export { readSamples, readSamplesCollect, parseVoxelSize, parseSamplesCsv, parseSamplesJson, sampleIdFromPath } from './sample-reader.js';
export type { SampleReadOptions, SampleReadResult, SampleFileResult } from './sample-reader.js';
export { parseTemplate, readTemplate, serializeTemplate } from './template-file.js';
export { assertWritable, canonicalPath, ensureOutputDir, formatCsv, formatCsvField, formatNumber, refuseInputAsOutput, writeFileAtomic } from './write.js';
export type { WriteOptions } from './write.js';
export { decodeUtf8, readTextFile } from './text-file.js';
export { parseCsvRecords, type CsvRecord } from './csv.js';
export { formatMatchCsv, matchCsvHeader, MAX_ALTERNATIVES, type PointProposal } from './match-output.js';
