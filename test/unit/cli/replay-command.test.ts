import { describe, expect, it } from 'vitest';
import { Command } from 'commander';
import { parseReplayOptions, registerReplayCommand } from '../../../src/cli/replay-command.js';
import { caught } from '../caught.js';

const base = { input: ['logs/'], out: 'replay/' };

describe('headroom replay options', () => {
  it('takes files, a window, references and the metrics step', () => {
    const o = parseReplayOptions({ ...base, window: '1d', reference: ['a.json', 'b.json'], metricsStep: '5m', progress: false });
    expect(o).toMatchObject({ inputs: ['logs/'], out: 'replay/', window: { name: '1d', lengthMs: 86_400_000 }, references: ['a.json', 'b.json'], metricsStepMs: 300_000, progress: false });
    expect(parseReplayOptions({ ...base, window: 'total', metricsStep: '0' })).toMatchObject({ window: { name: 'total', lengthMs: null }, metricsStepMs: 0 });
    expect(parseReplayOptions(base).window.name).toBe('1h');
  });

  it('takes a topic with --since and --until as ISO times with a zone', () => {
    const o = parseReplayOptions({ out: 'r/', topic: 'scores', since: '2026-12-01T00:00:00Z', until: '2026-12-01T06:00:00+01:00', brokers: '127.0.0.1:9092' });
    expect(o.topic).toEqual({ name: 'scores', sinceMs: Date.UTC(2026, 11, 1), untilMs: Date.UTC(2026, 11, 1, 5), brokers: ['127.0.0.1:9092'] });
  });

  it('names the option in every usage error', () => {
    const cases: [Record<string, unknown>, string][] = [
      [{ out: 'r/' }, '--input'],
      [{ ...base, topic: 'scores' }, '--topic'],
      [{ ...base, since: '2026-12-01T00:00:00Z' }, '--since'],
      [{ out: 'r/', topic: 'scores', until: '2026-12-02T00:00:00Z', brokers: 'h:1' }, '--since'],
      [{ out: 'r/', topic: 'scores', since: '2026-12-01', until: '2026-12-02T00:00:00Z', brokers: 'h:1' }, '--since'],
      [{ out: 'r/', topic: 'scores', since: '2026-12-02T00:00:00Z', until: '2026-12-01T00:00:00Z', brokers: 'h:1' }, '--until'],
      [{ out: 'r/', topic: 'scores', since: '2026-12-01T00:00:00Z', until: '2026-12-02T00:00:00Z' }, '--brokers'],
      [{ out: 'r/', topic: 'scores', since: '2026-12-01T00:00:00Z', until: '2026-12-02T00:00:00Z', brokers: 'no-port' }, '--brokers'],
      [{ input: ['x'] }, '--out'],
      [{ ...base, window: '90s' }, '--window'],
      [{ ...base, metricsStep: 'often' }, '--metrics-step'],
      [{ ...base, thresholds: '0.1,2' }, '--thresholds'],
      [{ ...base, emitReference: '' }, '--emit-reference'],
    ];
    for (const [raw, option] of cases) {
      const error = caught(() => parseReplayOptions(raw));
      expect(error.code, JSON.stringify(raw)).toBe('HR_ERR_CLI_USAGE');
      expect(error.message, JSON.stringify(raw)).toContain(option);
    }
  });

  it('explains every option in --help, with examples', () => {
    const program = new Command('headroom');
    registerReplayCommand(program);
    const replay = program.commands.find((c) => c.name() === 'replay');
    expect(replay).toBeDefined();
    let help = '';
    replay?.configureOutput({ writeOut: (s) => (help += s) });
    replay?.outputHelp();
    for (const flag of ['--input', '--topic', '--since', '--until', '--brokers', '--out', '--window', '--config', '--reference', '--thresholds', '--emit-reference', '--metrics-step', '--no-progress']) {
      expect(help, flag).toContain(flag);
    }
    expect(help).toContain('$ headroom replay --input');
    expect(help).toContain('$ headroom replay --topic');
    expect(help).toContain('aligned to');
  });
});
