/** A date as 2026-03-14: unambiguous across locales and the same on server and browser. */
export function formatDate(iso: string): string {
  return iso.slice(0, 10);
}
