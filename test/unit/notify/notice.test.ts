/** The notice and what is made of it: the webhook body (as README shows it), the log fields, the rule's sentence, the link. */
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { describeRule, noticeLogFields, noticeOf, seriesLink, webhookBody, WEBHOOK_FORMAT } from '../../../src/notify/index.js';
import { notice, rule, RULES, SERIES, transition } from './fixtures.js';

const readme = readFileSync(new URL('../../../README.md', import.meta.url), 'utf8');

describe('webhookBody', () => {
  it('is exactly the example README shows under "Alert notifications" (so the README stays true)', () => {
    const section = readme.slice(readme.indexOf('### Alert notifications'));
    const block = /```json\n([\s\S]*?)\n```/.exec(section);
    expect(block).not.toBeNull();
    const example = JSON.parse(block?.[1] ?? 'null') as unknown;
    // Through JSON as a receiver sees it, and field by field in the documented order.
    const body = JSON.parse(JSON.stringify(webhookBody(notice(2)))) as Record<string, unknown>;
    expect(body).toEqual(example);
    expect(Object.keys(body)).toEqual(Object.keys(example as Record<string, unknown>));
  });

  it('says whether the alert is raised after the move: firing and easing are, the rest are not', () => {
    const raised = [1, 2, 3, 4, 5].map((seq) => {
      const b = webhookBody(notice(seq));
      return `${b.to}:${b.raised}`;
    });
    expect(raised).toEqual(['brewing:false', 'firing:true', 'easing:true', 'resting:false', 'calm:false']);
  });

  it('carries the transition as the lifecycle made it, with nulls where there is no reading', () => {
    const t = transition(3, 'psi');
    const b = webhookBody(noticeOf(t, rule('psi')));
    expect(b).toMatchObject({ format: WEBHOOK_FORMAT, id: t.id, seq: 3, from: 'firing', to: 'easing', atMs: t.at, link: null });
    expect(b.at).toBe(new Date(t.at).toISOString());
    expect(b.reading).toEqual({ value: 0.081, comparedWith: 0.075, fireLevel: null, clearLevel: null });
    expect(b.rule).toEqual({ name: 'psi', kind: 'drift', description: describeRule(rule('psi')) });
  });

  it('writes an infinite figure as null, so the body stays JSON', () => {
    const b = webhookBody(notice(1, 'low-margin-rise', SERIES, Number.POSITIVE_INFINITY));
    expect(JSON.parse(JSON.stringify(b)).reading.value).toBeNull();
  });
});

describe('noticeLogFields', () => {
  it('has the stable flat field names README lists, with the same figures as the body', () => {
    const n = notice(2);
    const fields = noticeLogFields(n);
    expect(Object.keys(fields)).toEqual(['alertId', 'rule', 'ruleKind', 'model', 'version', 'segment', 'seq', 'from', 'to', 'at', 'value', 'comparedWith', 'fireLevel', 'clearLevel', 'link']);
    const listed = /`alertId`[^)]*`link`/.exec(readme)?.[0] ?? '';
    expect([...listed.matchAll(/`(\w+)`/g)].map((m) => m[1])).toEqual(Object.keys(fields));
    const body = webhookBody(n);
    expect(fields).toMatchObject({ alertId: body.id, value: body.reading.value, comparedWith: body.reading.comparedWith, at: body.at, link: body.link });
  });
});

describe('describeRule', () => {
  it('says in one sentence what each kind watches, its levels and its scope', () => {
    expect(describeRule(rule('low-margin-rise'))).toBe(
      'parcel-damage: share of margins below 0.1 over 1h (Wilson lower bound, z 1.96, at least 500 events) above reference × 1.5; clears at or below reference × 1.25',
    );
    expect(describeRule(rule('early'))).toBe(
      'every model, each line: early warning, a CUSUM of margins below 0.1 watching for the share to reach 2 × reference (about one false alarm per 10000000 events); clears at or below 0.5 × its decision level',
    );
    expect(describeRule(rule('psi'))).toBe('every model: PSI of the 1h view against the reference above 0.25 (at least 500 events); clears at or below 0.1');
    expect(RULES).toHaveLength(3);
  });
});

describe('seriesLink', () => {
  it('encodes each part, so a segment such as line=2 or a slash cannot change the route', () => {
    const t = transition(1, 'early', { model: 'parcel/damage', version: '2026.11.3', segment: 'line=2' });
    expect(seriesLink('https://headroom.example/', t)).toBe('https://headroom.example/api/series/parcel%2Fdamage/2026.11.3/line%3D2');
    expect(seriesLink('https://ops.example/headroom', t)).toBe('https://ops.example/headroom/api/series/parcel%2Fdamage/2026.11.3/line%3D2');
  });
});
