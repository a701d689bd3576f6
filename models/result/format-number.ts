/** Numbers in messages: integers as they are, others to six significant digits. */
export function formatNumber(v: number): string {
  return Number.isInteger(v) ? String(v) : Number(v.toPrecision(6)).toString();
}
