import { describe, expect, it } from 'vitest';
import { INITIAL_LIFECYCLE, stepLifecycle, transitionId, verdictOf } from '../../../src/alerts/index.js';
import { fnv1a64Hex } from '../../../src/alerts/lifecycle.js';
import type { AlertPhase, LifecycleState, LifecycleTiming, Reading } from '../../../src/alerts/index.js';

const who = { rule: 'rise', series: { model: 'parcel-damage', version: '2026.11.3', segment: 'all' } };
const FIRE = 10;
const CLEAR = 5;
const MIN = 60_000;

function reading(value: number | null): Reading {
  return value === null
    ? { verdict: 'unknown', value: null, fireLevel: FIRE, clearLevel: CLEAR, reason: 'too few events' }
    : { verdict: verdictOf(value, FIRE, CLEAR), value, fireLevel: FIRE, clearLevel: CLEAR };
}

/** Runs values at one evaluation a minute; returns each evaluation's phase and every transition as "from>to@minute". */
function run(values: readonly (number | null)[], timing: LifecycleTiming, start: LifecycleState = INITIAL_LIFECYCLE) {
  let state = start;
  const phases: AlertPhase[] = [];
  const moves: string[] = [];
  values.forEach((v, minute) => {
    const step = stepLifecycle(state, reading(v), timing, minute * MIN, who);
    state = step.state;
    phases.push(state.phase);
    for (const t of step.transitions) moves.push(`${t.from}>${t.to}@${minute}`);
  });
  return { phases, moves, state };
}

const timing = { holdMs: 3 * MIN, clearMs: 2 * MIN, cooldownMs: 5 * MIN };

describe('lifecycle: hold time', () => {
  it('fires only once the condition has held for holdMs', () => {
    const { moves } = run([0, 11, 11, 11, 11, 11], timing);
    expect(moves).toEqual(['calm>brewing@1', 'brewing>firing@4']);
  });

  it('goes back to calm when the condition breaks during the hold, and the hold starts again', () => {
    const { moves } = run([11, 11, 9, 11, 11, 11, 11], timing);
    // 9 is not above the fire level (though above the clear level): the hold is broken at minute 2.
    expect(moves).toEqual(['calm>brewing@0', 'brewing>calm@2', 'calm>brewing@3', 'brewing>firing@6']);
  });

  it('treats an unknown reading (too few events) as a broken hold', () => {
    expect(run([11, 11, null, 11], timing).moves).toEqual(['calm>brewing@0', 'brewing>calm@2', 'calm>brewing@3']);
  });

  it('with holdMs 0 passes through brewing in the same evaluation, reporting both', () => {
    const { moves, phases } = run([11], { ...timing, holdMs: 0 });
    expect(moves).toEqual(['calm>brewing@0', 'brewing>firing@0']);
    expect(phases).toEqual(['firing']);
  });
});

describe('lifecycle: hysteresis', () => {
  const firing = run([11, 11, 11, 11], timing);

  it('does not start easing while the value is between the clear and the fire level', () => {
    expect(firing.state.phase).toBe('firing');
    const { moves } = run([9, 6, 9, 5.01], timing, firing.state);
    expect(moves).toEqual([]);
  });

  it('clears only after the value has stayed at or below the clear level for clearMs', () => {
    const { moves } = run([11, 11, 11, 11, 5, 4, 5], timing);
    expect(moves.slice(2)).toEqual(['firing>easing@4', 'easing>resting@6']);
  });

  it('goes back to firing when the value rises above the clear level while easing', () => {
    const { moves } = run([11, 11, 11, 11, 5, 6, 4, 4, 4], timing);
    expect(moves.slice(2)).toEqual(['firing>easing@4', 'easing>firing@5', 'firing>easing@6', 'easing>resting@8']);
  });

  it('neither clears nor re-fires on unknown readings while easing', () => {
    const { moves, phases } = run([11, 11, 11, 11, 5, null, null, null, 5], timing);
    expect(moves.slice(2)).toEqual(['firing>easing@4', 'easing>resting@8']);
    expect(phases.slice(4, 8)).toEqual(['easing', 'easing', 'easing', 'easing']);
  });
});

describe('lifecycle: cooldown', () => {
  it('does not fire again within cooldownMs of clearing, then fires after a fresh hold', () => {
    // fires @3, eases @4, rests @6; cooldown 5 min → calm @11, a new hold fires @14.
    const values = [11, 11, 11, 11, 0, 0, 0, 11, 11, 11, 11, 11, 11, 11, 11];
    const { moves, phases } = run(values, timing);
    expect(moves).toEqual([
      'calm>brewing@0', 'brewing>firing@3', 'firing>easing@4', 'easing>resting@6',
      'resting>calm@11', 'calm>brewing@11', 'brewing>firing@14',
    ]);
    expect(phases.slice(7, 11)).toEqual(['resting', 'resting', 'resting', 'resting']);
  });

  it('zero clear and cooldown times pass straight through to calm', () => {
    const { moves } = run([11, 0], { holdMs: 0, clearMs: 0, cooldownMs: 0 });
    expect(moves).toEqual(['calm>brewing@0', 'brewing>firing@0', 'firing>easing@1', 'easing>resting@1', 'resting>calm@1']);
  });
});

describe('transitions as events', () => {
  it('carry rule, series, from, to, time, value, the level compared, and a numbered stable id', () => {
    const step = stepLifecycle(INITIAL_LIFECYCLE, reading(12), { ...timing, holdMs: 0 }, 1_000, who);
    expect(step.transitions).toEqual([
      { id: transitionId('rise', who.series, 1, 'brewing'), rule: 'rise', series: who.series, seq: 1, from: 'calm', to: 'brewing', at: 1_000, value: 12, threshold: FIRE },
      { id: transitionId('rise', who.series, 2, 'firing'), rule: 'rise', series: who.series, seq: 2, from: 'brewing', to: 'firing', at: 1_000, value: 12, threshold: FIRE },
    ]);
    expect(step.transitions[0]?.id).toMatch(/^hr-[0-9a-f]{16}$/);
  });

  it('ids differ by rule, series, number and target, and not by time', () => {
    const base = transitionId('rise', who.series, 3, 'firing');
    expect(transitionId('rise', who.series, 3, 'firing')).toBe(base);
    expect(new Set([
      base,
      transitionId('rise2', who.series, 3, 'firing'),
      transitionId('rise', { ...who.series, segment: 'line=2' }, 3, 'firing'),
      transitionId('rise', { ...who.series, version: '2026.11.4' }, 3, 'firing'),
      transitionId('rise', who.series, 4, 'firing'),
      transitionId('rise', who.series, 3, 'easing'),
    ]).size).toBe(6);
    // The same evaluation repeated later (after a restart from the saved state) gives the same ids.
    const early = stepLifecycle(INITIAL_LIFECYCLE, reading(12), timing, 1_000, who);
    const late = stepLifecycle(INITIAL_LIFECYCLE, reading(12), timing, 9_000, who);
    expect(late.transitions.map((t) => t.id)).toEqual(early.transitions.map((t) => t.id));
  });

  it('hashes with FNV-1a 64 as its authors publish it', () => {
    // Test vectors from the FNV reference (Fowler, Noll, Vo; draft-eastlake-fnv): "" and "a".
    expect(fnv1a64Hex('')).toBe('cbf29ce484222325');
    expect(fnv1a64Hex('a')).toBe('af63dc4c8601ec8c');
    expect(fnv1a64Hex('foobar')).toBe('85944171f73967e8');
  });
});
