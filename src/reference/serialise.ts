/**
 * Reference files are read by people too (in review, in a diff after a rebuild), so objects are indented
 * one key a line, while arrays of numbers (centroids, edges, counts) stay on one line each: a 200-centroid
 * digest is then 200 short lines rather than 1,000, and the header fields stay easy to find.
 */
import type { ReferenceFile } from './format.js';

function isFlat(value: readonly unknown[]): boolean {
  return value.every((v) => v === null || typeof v !== 'object' || (Array.isArray(v) && v.every((w) => w === null || typeof w !== 'object')));
}

function write(value: unknown, indent: string): string {
  if (value === null || typeof value !== 'object') return JSON.stringify(value);
  const inner = `${indent}  `;
  if (Array.isArray(value)) {
    if (value.length === 0) return '[]';
    if (value.every((v) => v === null || typeof v !== 'object')) return JSON.stringify(value);
    if (isFlat(value)) return `[\n${value.map((v) => inner + JSON.stringify(v)).join(',\n')}\n${indent}]`;
    return `[\n${value.map((v) => inner + write(v, inner)).join(',\n')}\n${indent}]`;
  }
  const entries = Object.entries(value).filter(([, v]) => v !== undefined);
  if (entries.length === 0) return '{}';
  return `{\n${entries.map(([k, v]) => `${inner}${JSON.stringify(k)}: ${write(v, inner)}`).join(',\n')}\n${indent}}`;
}

/** The file's text: JSON.parse of it gives back `reference` exactly (doubles print losslessly). */
export function formatReference(reference: ReferenceFile): string {
  return `${write(reference, '')}\n`;
}
