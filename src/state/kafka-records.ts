/**
 * How a checkpoint is laid out as records of a compacted Kafka topic (the I/O is in kafka-store.ts).
 *
 * Keys. A partition's checkpoint lives under `<group>/<topic>/<partition>` with group and topic
 * percent-encoded as in the file store (so "/" and "#" cannot occur inside a name): the same key at
 * every save, so compaction keeps only the latest. A null value (a tombstone) there means no checkpoint.
 *
 * Values. The state's JSON is gzipped (node:zlib; a realistic state shrinks 2-4 times, see the README).
 * If the gzipped bytes fit in one chunk the record at the key holds them (kind `inline`). A bigger
 * state would exceed the broker's default limit of about 1 MB per record batch, so it is split over
 * chunk records keyed `<key>#<saveId>.<index>` (kind `chunk`), and only once every chunk is
 * acknowledged is the record at the key written: a `manifest` naming the save id, the chunk count, the
 * byte count and the SHA-256 of the whole. That last write is the commit point, which is why a save is
 * atomic: a crash before it leaves the previous record at the key in force and some unused chunks;
 * the chunks of each save have keys of their own, so no later save can overwrite the chunks a manifest
 * names. Superseded chunks are removed by tombstones after the next manifest (see staleChunkKeys).
 *
 * The kind travels in the record header `headroom-checkpoint`; a record at a checkpoint key without it
 * was not written by headroom and is refused as corrupt.
 */
import { createHash } from 'node:crypto';
import { corrupt } from './checkpoint-store.js';
import { badArgument } from './fail.js';
import { decodeName, encodeName } from './file-store.js';

export const KIND_HEADER = 'headroom-checkpoint';
export type RecordKind = 'inline' | 'manifest' | 'chunk';
export const MANIFEST_FORMAT = 'headroom-checkpoint-manifest/1';
/**
 * Half the broker's default max.message.bytes (1,048,588), so a chunk with its key and headers fits
 * a default topic with room to spare, and the consumer's default 1 MiB per partition fetch holds it.
 */
export const DEFAULT_CHUNK_BYTES = 512 * 1024;
/** A manifest naming more chunks than this is damage, not a state (64 GiB at the default size). */
const MAX_CHUNKS = 131_072;

const STATE_KEY = /^([^/#]+)\/([^/#]+)\/(0|[1-9][0-9]*)$/;
const CHUNK_KEY = /^([^#]+)#([0-9a-z]+)\.(0|[1-9][0-9]*)$/;
const SAVE_ID = /^[0-9a-z]{1,64}$/;

export interface StateKeyParts {
  readonly group: string;
  readonly topic: string;
  readonly partition: number;
}

export function stateKey(group: string, topic: string, partition: number): string {
  return `${encodeName(group)}/${encodeName(topic)}/${partition}`;
}

/** The parts of a checkpoint key; undefined for chunk keys and keys headroom did not write. */
export function parseStateKey(key: string): StateKeyParts | undefined {
  const match = STATE_KEY.exec(key);
  if (match === null) return undefined;
  const group = decodeName(match[1] as string);
  const topic = decodeName(match[2] as string);
  const partition = Number(match[3]);
  if (group === undefined || topic === undefined || !Number.isSafeInteger(partition)) return undefined;
  // Only the one spelling stateKey() makes, so two keys never name the same checkpoint.
  return stateKey(group, topic, partition) === key ? { group, topic, partition } : undefined;
}

export function chunkKey(key: string, saveId: string, index: number): string {
  return `${key}#${saveId}.${index}`;
}

export function parseChunkKey(chunk: string): { readonly key: string; readonly saveId: string; readonly index: number } | undefined {
  const match = CHUNK_KEY.exec(chunk);
  if (match === null || parseStateKey(match[1] as string) === undefined) return undefined;
  return { key: match[1] as string, saveId: match[2] as string, index: Number(match[3]) };
}

export interface OutRecord {
  readonly key: string;
  readonly value: Buffer;
  readonly kind: RecordKind;
}

export interface SavePlan {
  /** Written first, all acknowledged before the head. Empty when the state fits in one record. */
  readonly chunks: readonly OutRecord[];
  /** The record at the checkpoint key: the commit point. */
  readonly head: OutRecord;
}

export interface Manifest {
  readonly format: typeof MANIFEST_FORMAT;
  readonly saveId: string;
  readonly chunks: number;
  readonly bytes: number;
  readonly sha256: string;
}

function sha256(bytes: Buffer): string {
  return createHash('sha256').update(bytes).digest('hex');
}

/** The records of one save of `packed` (the gzipped state) under `key`. */
export function planSave(key: string, packed: Buffer, saveId: string, chunkBytes: number = DEFAULT_CHUNK_BYTES): SavePlan {
  if (!Number.isSafeInteger(chunkBytes) || chunkBytes < 1) throw badArgument('chunkBytes', 'must be a positive whole number of bytes', chunkBytes);
  if (!SAVE_ID.test(saveId)) throw badArgument('saveId', 'must be 1-64 lowercase letters and digits', saveId);
  if (packed.length <= chunkBytes) return { chunks: [], head: { key, value: packed, kind: 'inline' } };
  const chunks: OutRecord[] = [];
  for (let start = 0, index = 0; start < packed.length; start += chunkBytes, index += 1) {
    chunks.push({ key: chunkKey(key, saveId, index), value: packed.subarray(start, start + chunkBytes), kind: 'chunk' });
  }
  const manifest: Manifest = { format: MANIFEST_FORMAT, saveId, chunks: chunks.length, bytes: packed.length, sha256: sha256(packed) };
  return { chunks, head: { key, value: Buffer.from(JSON.stringify(manifest)), kind: 'manifest' } };
}

/** A record as the store's view holds it; `where` names topic, key and offset for errors. */
export interface StoredRecord {
  readonly value: Buffer | null;
  readonly kind: string | undefined;
  readonly where: string;
}

function parseManifest(head: StoredRecord): Manifest {
  let value: unknown;
  try {
    value = JSON.parse((head.value as Buffer).toString('utf8'));
  } catch (error) {
    throw corrupt(head.where, 'is a manifest that is not JSON', error);
  }
  const m = value as Partial<Manifest> | null;
  const problem =
    m === null || typeof m !== 'object'
      ? 'is a manifest that is not an object'
      : m.format !== MANIFEST_FORMAT
        ? `is a manifest of format ${JSON.stringify(m.format)}, not ${MANIFEST_FORMAT}`
        : typeof m.saveId !== 'string' || !SAVE_ID.test(m.saveId)
          ? 'is a manifest with a bad saveId'
          : !Number.isSafeInteger(m.chunks) || (m.chunks as number) < 1 || (m.chunks as number) > MAX_CHUNKS
            ? `is a manifest with a bad chunk count ${JSON.stringify(m.chunks)}`
            : !Number.isSafeInteger(m.bytes) || (m.bytes as number) < 0
              ? `is a manifest with a bad byte count ${JSON.stringify(m.bytes)}`
              : typeof m.sha256 !== 'string' || !/^[0-9a-f]{64}$/.test(m.sha256)
                ? 'is a manifest with a bad sha256'
                : undefined;
  if (problem !== undefined) throw corrupt(head.where, problem);
  return m as Manifest;
}

/**
 * The gzipped state a checkpoint record stands for, whole and checked, or HR_ERR_CHECKPOINT_CORRUPT
 * naming the record (and the chunk) at fault. `chunkOf` looks a chunk key up in the view.
 */
export function unpackHead(key: string, head: StoredRecord, chunkOf: (chunk: string) => StoredRecord | undefined): Buffer {
  if (head.value === null) throw badArgument('head', 'is a tombstone: there is no checkpoint to unpack');
  if (head.kind === 'inline') return head.value;
  if (head.kind !== 'manifest') {
    const found = head.kind === undefined ? `no ${KIND_HEADER} header` : `${KIND_HEADER} ${JSON.stringify(head.kind)}`;
    throw corrupt(head.where, `has ${found} (not written by headroom, or by a newer version)`);
  }
  const m = parseManifest(head);
  const parts: Buffer[] = [];
  for (let index = 0; index < m.chunks; index += 1) {
    const name = chunkKey(key, m.saveId, index);
    const chunk = chunkOf(name);
    if (chunk === undefined || chunk.value === null) throw corrupt(head.where, `names chunk ${name}, which is ${chunk === undefined ? 'not on the topic' : 'deleted'}`);
    if (chunk.kind !== 'chunk') throw corrupt(chunk.where, `should be chunk ${index} of save ${m.saveId} but has ${KIND_HEADER} ${JSON.stringify(chunk.kind)}`);
    parts.push(chunk.value);
  }
  const packed = Buffer.concat(parts);
  if (packed.length !== m.bytes) throw corrupt(head.where, `names ${m.bytes} bytes but its chunks hold ${packed.length}`);
  if (sha256(packed) !== m.sha256) throw corrupt(head.where, `names chunks whose SHA-256 does not match (save ${m.saveId})`);
  return packed;
}

/** The save id a head names, if it is a well-formed manifest; used to keep its chunks. */
export function manifestSaveId(head: StoredRecord | undefined): string | undefined {
  if (head?.kind !== 'manifest' || head.value === null) return undefined;
  try {
    return parseManifest(head).saveId;
  } catch {
    return undefined;
  }
}

/**
 * Chunk keys of `key` safe to delete once a save has committed at the head `keepSaveId`: every live
 * chunk of another save written before `beforeOffset`, the offset of the head this save replaced.
 * Chunks written after that head may belong to a save still under way elsewhere (an overlapping
 * save during a rebalance); they are left for the next save, by which time they are older than its
 * replaced head. `chunks` are the live chunk records of the view: key and offset.
 */
export function staleChunkKeys(key: string, keepSaveId: string | undefined, beforeOffset: bigint | undefined, chunks: Iterable<readonly [string, bigint]>): string[] {
  if (beforeOffset === undefined) return [];
  const out: string[] = [];
  for (const [chunk, offset] of chunks) {
    const parts = parseChunkKey(chunk);
    if (parts === undefined || parts.key !== key || parts.saveId === keepSaveId || offset >= beforeOffset) continue;
    out.push(chunk);
  }
  return out.sort();
}

/** Which partition of the state topic holds `key` and its chunks: one partition, so their offsets compare. */
export function statePartitionOf(key: string, partitions: number): number {
  return createHash('sha256').update(key).digest().readUInt32BE(0) % partitions;
}

/** How errors name a record: topic, partition, offset and key. */
export function recordWhere(topic: string, partition: number, offset: bigint | string, key: string): string {
  return `checkpoint record ${topic} partition ${partition} offset ${offset} (key ${key})`;
}
