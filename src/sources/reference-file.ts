/** Reading a reference file from disk; the checks themselves are src/reference's (parseReferenceText). */
import { readFile } from 'node:fs/promises';
import { HeadroomError } from '../errors.js';
import { parseReferenceText } from '../reference/index.js';
import type { LoadedReference } from '../reference/index.js';

export async function loadReferenceFile(path: string): Promise<LoadedReference> {
  let text: string;
  try {
    text = await readFile(path, 'utf8');
  } catch (error) {
    const code = (error as NodeJS.ErrnoException).code;
    throw new HeadroomError('HR_ERR_INPUT_UNREADABLE', `reference file ${path}: ${code === 'ENOENT' ? 'no such file' : String(error)}`, {
      cause: error,
      context: { path, code },
    });
  }
  return parseReferenceText(text, path);
}
