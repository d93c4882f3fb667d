/**
 * Digits grouped in threes with a narrow no-break space, the SI style (BIPM SI Brochure, 5.4.4), which reads the
 * same in every locale: 16 384.
 */
export function groupDigits(value: number): string {
  const [whole, fraction] = String(value).split('.');
  const sign = whole.startsWith('-') ? '-' : '';
  const digits = sign ? whole.slice(1) : whole;
  const grouped = digits.replace(/\B(?=(\d{3})+(?!\d))/g, '\u202f');
  return `${sign}${grouped}${fraction ? `.${fraction}` : ''}`;
}

/** A rate in bits per pixel, to four decimals at most (0.5, 0.0625, 0.0547). */
export function formatBpp(bpp: number): string {
  return `${Number(bpp.toFixed(4))}`;
}

/** A size in bytes with its binary multiple alongside when that is easier to read. */
export function formatByteSize(bytes: number): { exact: string; approx: string | null } {
  const exact = `${groupDigits(bytes)} B`;
  if (bytes < 1024) return { exact, approx: null };
  const units = ['KiB', 'MiB', 'GiB'];
  let value = bytes / 1024;
  let unit = 0;
  while (value >= 1024 && unit < units.length - 1) {
    value /= 1024;
    unit += 1;
  }
  return { exact, approx: `${value.toFixed(value < 10 ? 2 : 1)} ${units[unit]}` };
}

/** A short size for table cells: three significant digits at most (128 B, 16 KiB, 1.5 MiB). */
export function formatCompactBytes(bytes: number): string {
  const units = ['B', 'KiB', 'MiB', 'GiB'];
  let value = bytes;
  let unit = 0;
  while (value >= 1024 && unit < units.length - 1) {
    value /= 1024;
    unit += 1;
  }
  return `${groupDigits(Number(value.toPrecision(3)))} ${units[unit]}`;
}
