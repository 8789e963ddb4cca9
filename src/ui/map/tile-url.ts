/**
 * The one rule for a custom background-tile address: https (the built app's Content-Security-Policy
 * lets map images come from https addresses, not plain http) with {z}, {x} and {y} in that order.
 */
export function tileUrlUsable(url: string): boolean {
  return /^https:\/\/.+\{z\}.*\{x\}.*\{y\}/.test(url.trim());
}
