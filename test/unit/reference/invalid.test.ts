/** A reference file that is wrong in any way is refused with HR_ERR_REFERENCE_INVALID, naming file and field. */
import { describe, expect, it } from 'vitest';
import { buildReference, parseReference, parseReferenceText } from '../../../src/reference/index.js';
import { CREATED_AT, caught, parcelEvents } from './events.js';

const SOURCE = 'references/parcel.json';
const good = JSON.stringify(buildReference(parcelEvents(500, 3), { createdAt: CREATED_AT, segmentKeys: ['line'] }));

type Json = Record<string, any>; // eslint-disable-line @typescript-eslint/no-explicit-any

function refusal(edit: (file: Json) => void): { field: unknown; message: string } {
  const file = JSON.parse(good) as Json;
  edit(file);
  const error = caught(() => parseReference(file, SOURCE));
  expect(error.code).toBe('HR_ERR_REFERENCE_INVALID');
  expect(error.context.source).toBe(SOURCE);
  expect(error.message).toContain(`${SOURCE}: `);
  return { field: error.context.field, message: error.message };
}

describe('parseReference', () => {
  it('accepts the file as built', () => {
    expect(parseReference(JSON.parse(good), SOURCE).n).toBe(500);
  });

  it('refuses another format version, saying which one it reads', () => {
    const { field, message } = refusal((f) => (f.format = 'headroom-reference/2'));
    expect(field).toBe('format');
    expect(message).toContain('"headroom-reference/2"');
    expect(message).toContain('reads headroom-reference/1 only');
  });

  it('refuses something that is not a reference file at all', () => {
    expect(refusal((f) => delete f.format).message).toContain('is this a reference file?');
    const error = caught(() => parseReference([1, 2], SOURCE));
    expect(error.message).toContain('expected an object, got an array');
  });

  it('names a missing field', () => {
    const { field, message } = refusal((f) => delete f.version);
    expect(field).toBe('version');
    expect(message).toContain(`${SOURCE}: version: expected string, got nothing`);
  });

  it('names a field of the wrong type by its full path', () => {
    const { field, message } = refusal((f) => (f.segments.all.lowMargin[0].share = '0.1'));
    expect(field).toBe('segments.all.lowMargin[0].share');
    expect(message).toContain(`${SOURCE}: segments.all.lowMargin[0].share: expected number, got string`);
  });

  it('quotes segment names that are not plain identifiers', () => {
    const { field } = refusal((f) => (f.segments['line=2'].n = -3));
    expect(field).toBe('segments["line=2"].n');
  });

  it('names the bad part of a digest state', () => {
    expect(refusal((f) => (f.segments.all.confidence.digest.centroids[0][1] = -1)).field).toBe('segments.all.confidence.digest.centroids[0][1]');
    const { field, message } = refusal((f) => (f.segments['line=1'].confidence.digest.v = 2));
    expect(field).toBe('segments["line=1"].confidence.digest.v');
    expect(message).toContain('version 1');
    expect(refusal((f) => (f.segments.all.labels.signed.digest = 'lost')).field).toBe('segments.all.labels.signed.digest');
  });

  it('refuses figures that disagree with each other', () => {
    const seg = (f: Json) => f.segments.all;
    expect(refusal((f) => (seg(f).lowMargin[1].count += 1)).field).toBe('segments.all.lowMargin[1].count');
    expect(refusal((f) => (seg(f).lowMargin[0].share = 0.5)).field).toBe('segments.all.lowMargin[0].share');
    expect(refusal((f) => (seg(f).lowMargin[0].threshold = 0.2)).field).toBe('segments.all.lowMargin[0].threshold');
    expect(refusal((f) => (f.segments['line=1'].n += 1)).field).toBe('segments["line=1"].confidence.count');
    expect(refusal((f) => (f.n += 1)).field).toBe('segments.all.n');
    expect(refusal((f) => seg(f).decileEdges.reverse()).field).toBe('segments.all.decileEdges[1]');
    expect(refusal((f) => seg(f).decileEdges.pop()).field).toBe('segments.all.decileEdges');
    expect(refusal((f) => (seg(f).labels.errors.count = seg(f).labels.n + 1)).field).toBe('segments.all.labels.errors.count');
    expect(refusal((f) => seg(f).labels.calibration.pop()).field).toBe('segments.all.labels.calibration');
    expect(refusal((f) => (f.thresholds = [0.25, 0.1])).field).toBe('thresholds[1]');
  });

  it('refuses a segment without its key in segmentKeys, and a file without "all"', () => {
    expect(refusal((f) => (f.segments['site=north'] = f.segments['line=1'])).field).toBe('segments["site=north"]');
    expect(refusal((f) => delete f.segments.all).field).toBe('segments.all');
  });

  it('refuses text that is not JSON', () => {
    const error = caught(() => parseReferenceText(good.slice(0, 200), SOURCE));
    expect(error.code).toBe('HR_ERR_REFERENCE_INVALID');
    expect(error.message).toContain(`${SOURCE}: is not JSON`);
  });
});
