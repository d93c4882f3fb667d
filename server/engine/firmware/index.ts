// Firmware export: the codebook as a fixed-point C table with a reference decoder in C99 (README.md in every bundle
// says how to build and call it), and the PSNR cost of that table's rounding. Pure: it writes no files.
export { buildFirmwareBundle, type BundleFile, type FirmwareBundle } from './c-bundle';
export { fixedPointTable, fixedPointTableBytes, withFixedPointCodewords, MAX_FRACTION_BITS, RESIDUAL_WIDTHS, type FixedPointTable, type ResidualWidth } from './fixed-point';
export { measureFixedPointCost, type RoundingCost, type RoundingCostImage } from './rounding-cost';
export { decoderCost, type CostedCodebook, type DecoderCost, type FirmwareTableCost, type OperationCounts } from './decoder-cost';
export { structureTableBytes } from './c-bundle';
