/**
 * Which files an input list names. A directory stands for its event files (not recursively, sorted by
 * name so the order, and with it any digest built from it, does not depend on the file system); a file
 * named outright is read whatever its name, its format told by its extension.
 */
import { readdir, stat } from 'node:fs/promises';
import { join, resolve } from 'node:path';
import { HeadroomError } from '../errors.js';

export type InputFormat = 'jsonl' | 'csv';

export interface InputFile {
  /** As given (or joined onto the directory given), for messages. */
  readonly path: string;
  readonly format: InputFormat;
  readonly gzip: boolean;
  /** Size on disk (compressed, for .gz), for progress. */
  readonly bytes: number;
  readonly mtimeMs: number;
}

export const DIRECTORY_PATTERNS: readonly string[] = ['*.jsonl', '*.jsonl.gz', '*.csv', '*.csv.gz'];
const DIRECTORY_SUFFIXES = ['.jsonl', '.jsonl.gz', '.csv', '.csv.gz'];

export function formatOf(path: string): { format: InputFormat; gzip: boolean } {
  const lower = path.toLowerCase();
  const gzip = lower.endsWith('.gz');
  const base = gzip ? lower.slice(0, -3) : lower;
  return { format: base.endsWith('.csv') ? 'csv' : 'jsonl', gzip };
}

function unreadable(path: string, error: unknown): HeadroomError {
  const code = (error as NodeJS.ErrnoException | undefined)?.code;
  const why = code === 'ENOENT' ? 'no such file or directory' : code === 'EACCES' ? 'permission denied' : String(error);
  return new HeadroomError('HR_ERR_INPUT_UNREADABLE', `${path}: ${why}`, { cause: error, context: { path, code } });
}

export async function listInputFiles(paths: readonly string[]): Promise<InputFile[]> {
  const files: InputFile[] = [];
  // The same file named twice (directly and through its directory) would count its events twice.
  const seen = new Set<string>();
  const addFile = (path: string, info: { size: number; mtimeMs: number }): void => {
    const key = resolve(path);
    if (seen.has(key)) return;
    seen.add(key);
    files.push({ path, ...formatOf(path), bytes: info.size, mtimeMs: info.mtimeMs });
  };
  for (const path of paths) {
    let info;
    try {
      info = await stat(path);
    } catch (error) {
      throw unreadable(path, error);
    }
    if (!info.isDirectory()) {
      addFile(path, info);
      continue;
    }
    let names: string[];
    try {
      names = (await readdir(path)).filter((name) => DIRECTORY_SUFFIXES.some((s) => name.toLowerCase().endsWith(s))).sort();
    } catch (error) {
      throw unreadable(path, error);
    }
    if (names.length === 0) {
      throw new HeadroomError('HR_ERR_INPUT_EMPTY', `directory ${path} holds no event files (${DIRECTORY_PATTERNS.join(', ')})`, { context: { path } });
    }
    for (const name of names) {
      const child = join(path, name);
      try {
        const childInfo = await stat(child);
        if (childInfo.isFile()) addFile(child, childInfo);
      } catch (error) {
        throw unreadable(child, error);
      }
    }
  }
  return files;
}
