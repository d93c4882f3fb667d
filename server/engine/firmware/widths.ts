/** Storage of a mean-removed codebook's residuals in the firmware table; plain codebooks are always uint8. Constants only, so the contracts read them without the engine. */
export const RESIDUAL_WIDTHS = ['int16', 'int8'] as const;
export type ResidualWidth = (typeof RESIDUAL_WIDTHS)[number];
