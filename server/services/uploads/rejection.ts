/** One file or archive entry an upload could not use, and why, in words that name it. */
export interface Rejection {
  file: string;
  message: string;
}

/** Byte counts in binary units (MiB, GiB), the way the limits are configured. */
export function formatBytes(bytes: number): string {
  const units = ['bytes', 'KiB', 'MiB', 'GiB', 'TiB'];
  let value = bytes;
  let unit = 0;
  while (value >= 1024 && unit < units.length - 1) {
    value /= 1024;
    unit += 1;
  }
  if (unit === 0) return `${bytes} bytes`;
  return `${Number.isInteger(value) ? value : value.toFixed(1)} ${units[unit]}`;
}
