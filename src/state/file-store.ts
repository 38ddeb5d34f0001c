/**
 * Checkpoints as files, for a single `headroom watch` instance: `<dir>/<group>/<topic>@<partition>.json`.
 *
 * Why a save is crash-safe. It writes a temporary file beside the checkpoint, fsyncs it, renames it
 * over the checkpoint and fsyncs the directory. rename() replaces a name atomically (POSIX), so a
 * reader sees the old file or the new one, never part of either; the first fsync makes sure the new
 * file's bytes are on disk before its name can be, and the directory fsync makes the rename itself
 * survive a power cut (otherwise a crash could bring back the old checkpoint after save() resolved, and
 * the offset committed to Kafka after it would point past what the state holds). A crash mid-save
 * leaves a stray `*.tmp-*` file, which load() and list() ignore.
 *
 * Names. Group and topic are percent-encoded except [A-Za-z0-9_.-] (and a leading "."), so any group
 * id makes one safe path segment, "@" cannot occur in an encoded topic, and every name decodes back.
 * On a case-insensitive file system two topics that differ only in case would share a file; Kafka
 * users rarely do that, but keep such deployments on separate directories.
 */
import { mkdir, open, readdir, readFile } from 'node:fs/promises';
import { join } from 'node:path';
import { HeadroomError } from '../errors.js';
import { checkGroup, checkKey, decodeCheckpoint, encodeCheckpoint, sortKeys, trackCall } from './checkpoint-store.js';
import type { CheckpointKey, CheckpointStore } from './checkpoint-store.js';
import { badArgument } from './fail.js';
import type { PartitionStateJson } from './partition-state.js';
import { writeTextAtomically } from '../files/atomic-write.js';

export interface FileCheckpointStoreOptions {
  /** The directory of checkpoints; made on the first save. */
  readonly dir: string;
}

/** Most file systems allow 255 bytes a name; room is left for the temporary suffix. */
const MAX_NAME_BYTES = 200;
const CHECKPOINT_NAME = /^(.+)@(0|[1-9][0-9]*)\.json$/;

export function encodeName(name: string): string {
  let out = '';
  for (const char of name) {
    if (/^[A-Za-z0-9_.-]$/.test(char) && !(out === '' && char === '.')) out += char;
    else for (const byte of Buffer.from(char, 'utf8')) out += `%${byte.toString(16).toUpperCase().padStart(2, '0')}`;
  }
  return out;
}

export function decodeName(encoded: string): string | undefined {
  try {
    return decodeURIComponent(encoded);
  } catch {
    return undefined;
  }
}

function ioError(action: string, path: string, cause: unknown): HeadroomError {
  const code = (cause as NodeJS.ErrnoException | undefined)?.code;
  return new HeadroomError('HR_ERR_CHECKPOINT_IO', `cannot ${action} ${path}${code === undefined ? '' : ` (${code})`}`, { cause, context: { path } });
}

async function syncDirectory(dir: string): Promise<void> {
  let handle;
  try {
    handle = await open(dir, 'r');
    await handle.sync();
  } catch (error) {
    // Windows cannot open or fsync a directory; its rename is as durable as it gets there.
    if (process.platform !== 'win32') throw error;
  } finally {
    await handle?.close();
  }
}

export class FileCheckpointStore implements CheckpointStore {
  readonly dir: string;
  private readonly groupDirs = new Map<string, Promise<void>>();
  private readonly pending = new Set<Promise<unknown>>();
  private closing: Promise<void> | undefined;
  private sequence = 0;

  constructor(options: FileCheckpointStoreOptions) {
    if (typeof options.dir !== 'string' || options.dir === '') throw badArgument('dir', 'must be a directory path', options.dir);
    this.dir = options.dir;
  }

  /** Where the checkpoint of a partition is (or would be) kept. */
  pathOf(group: string, topic: string, partition: number): string {
    checkKey(group, topic, partition);
    const groupName = encodeName(group);
    const fileName = `${encodeName(topic)}@${partition}.json`;
    if (Buffer.byteLength(groupName) > MAX_NAME_BYTES) throw badArgument('group', `is too long for a file name once encoded (${groupName.length} bytes, at most ${MAX_NAME_BYTES})`, group);
    if (Buffer.byteLength(fileName) > MAX_NAME_BYTES) throw badArgument('topic', `is too long for a file name once encoded (${fileName.length} bytes, at most ${MAX_NAME_BYTES})`, topic);
    return join(this.dir, groupName, fileName);
  }

  load(group: string, topic: string, partition: number): Promise<PartitionStateJson | undefined> {
    return this.track(async () => {
      const path = this.pathOf(group, topic, partition);
      let text: string;
      try {
        text = await readFile(path, 'utf8');
      } catch (error) {
        if ((error as NodeJS.ErrnoException).code === 'ENOENT') return undefined;
        throw ioError('read', path, error);
      }
      return decodeCheckpoint(text, path, topic, partition);
    });
  }

  save(group: string, topic: string, partition: number, state: PartitionStateJson): Promise<void> {
    return this.track(async () => {
      const path = this.pathOf(group, topic, partition);
      const text = encodeCheckpoint(topic, partition, state);
      const groupDir = join(this.dir, encodeName(group));
      await this.ensureGroupDir(groupDir);
      this.sequence += 1;
      const temp = `${path}.tmp-${process.pid}-${this.sequence}`;
      try {
        await writeTextAtomically(path, text, temp);
      } catch (error) {
        throw ioError('write', path, error);
      }
      try {
        await syncDirectory(groupDir);
      } catch (error) {
        throw ioError('sync the directory of', path, error);
      }
    });
  }

  list(group: string): Promise<CheckpointKey[]> {
    return this.track(async () => {
      checkGroup(group);
      const groupDir = join(this.dir, encodeName(group));
      let names: string[];
      try {
        names = await readdir(groupDir);
      } catch (error) {
        if ((error as NodeJS.ErrnoException).code === 'ENOENT') return [];
        throw ioError('list', groupDir, error);
      }
      const keys: CheckpointKey[] = [];
      for (const name of names) {
        const match = CHECKPOINT_NAME.exec(name);
        const topic = match === null ? undefined : decodeName(match[1] as string);
        if (match === null || topic === undefined || encodeName(topic) !== match[1]) continue; // temp files, strangers
        keys.push({ topic, partition: Number(match[2]) });
      }
      return sortKeys(keys);
    });
  }

  /** Waits for loads and saves under way; idempotent. */
  close(): Promise<void> {
    this.closing ??= Promise.allSettled([...this.pending]).then(() => undefined);
    return this.closing;
  }

  private track<T>(work: () => Promise<T>): Promise<T> {
    return trackCall(this.pending, this.closing !== undefined, work);
  }

  /** Makes the group's directory once, and makes its entry in the parent durable. */
  private ensureGroupDir(groupDir: string): Promise<void> {
    let ready = this.groupDirs.get(groupDir);
    if (ready === undefined) {
      ready = (async () => {
        try {
          await mkdir(groupDir, { recursive: true });
          await syncDirectory(this.dir);
        } catch (error) {
          this.groupDirs.delete(groupDir);
          throw ioError('make the directory', groupDir, error);
        }
      })();
      this.groupDirs.set(groupDir, ready);
    }
    return ready;
  }
}
