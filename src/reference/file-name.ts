/**
 * `<model>@<version>.json` as a name every file system takes. Model and version are free text (they may
 * hold `/`, `:`, `..` or `@`), so anything beyond letters, digits, `-`, `_` and an inner `.` is
 * percent-encoded byte by byte: reversible, so two model versions never share a file, and `@` stays an
 * unambiguous separator.
 */

/** File systems allow 255 bytes a name; room is left for `.json` and a temporary suffix. */
const MAX_PART = 100;

const utf8 = new TextEncoder();

function encodePart(text: string): string {
  let out = '';
  for (const byte of utf8.encode(text)) {
    const c = String.fromCharCode(byte);
    const plain = /[A-Za-z0-9_-]/.test(c) || (c === '.' && out !== '');
    out += plain ? c : `%${byte.toString(16).toUpperCase().padStart(2, '0')}`;
  }
  return out.length <= MAX_PART ? out : `${out.slice(0, MAX_PART - 9)}~${fnv1a(text)}`;
}

/** FNV-1a, 32 bits: a short stable tag that keeps cut-down names apart. */
function fnv1a(text: string): string {
  let h = 0x811c9dc5;
  for (let i = 0; i < text.length; i++) {
    h ^= text.charCodeAt(i);
    h = Math.imul(h, 0x01000193) >>> 0;
  }
  return h.toString(16).padStart(8, '0');
}

export function referenceFileName(model: string, version: string): string {
  return `${encodePart(model)}@${encodePart(version)}.json`;
}
