/**
 * The demo's clock is scenario time: it starts at the wall clock's now and runs `speed` times faster, so
 * at --speed 60 a scenario minute passes every wall second. Everything downstream (event times, the
 * state's "future" check, alert hold times) reads this clock; nothing reads the wall clock but here.
 */
import { HeadroomError } from '../errors.js';

export const MAX_SPEED = 3_600;

export interface ScenarioClock {
  readonly startMs: number;
  readonly speed: number;
  /** Scenario time now, epoch ms. */
  now(): number;
  /** Scenario time since the start. */
  elapsed(): number;
  /** Wall-clock ms that `scenarioMs` of scenario time takes. */
  wallMsFor(scenarioMs: number): number;
}

export function scenarioClock(speed: number, wallNow: () => number = () => Date.now()): ScenarioClock {
  if (!(Number.isFinite(speed) && speed > 0 && speed <= MAX_SPEED)) {
    throw new HeadroomError('HR_ERR_DEMO_ARGUMENT', `speed must be in (0, ${MAX_SPEED}], got ${speed}`, { context: { option: 'speed', value: speed } });
  }
  const wallStart = wallNow();
  const startMs = Math.floor(wallStart);
  return {
    startMs,
    speed,
    now: () => startMs + Math.floor((wallNow() - wallStart) * speed),
    elapsed: () => Math.floor((wallNow() - wallStart) * speed),
    wallMsFor: (scenarioMs) => scenarioMs / speed,
  };
}

/** Runs `tick` every `everyMs` of wall time, never two at once; returns the stop function. */
export function every(everyMs: number, tick: () => Promise<void> | void, onError: (error: unknown) => void): () => void {
  let running = false;
  const timer = setInterval(() => {
    if (running) return;
    running = true;
    Promise.resolve()
      .then(tick)
      .catch(onError)
      .finally(() => (running = false));
  }, everyMs);
  return () => clearInterval(timer);
}
