import { describe, expect, it } from 'vitest';
import { chromiumGuard } from '../../harness/browser.js';
import { caught } from '../caught.js';

describe('chromiumGuard', () => {
  const missing = '/nonexistent/headroom-test/chromium';

  it('skips with a message without Chromium, outside CI', () => {
    const lines: string[] = [];
    expect(chromiumGuard((l) => lines.push(l), {}, missing)).toBe(false);
    expect(lines.join('\n')).toMatch(/chromium not found \(Debian package chromium.*will be skipped/);
  });

  it('fails under CI=true instead of skipping', () => {
    const lines: string[] = [];
    expect(caught(() => chromiumGuard((l) => lines.push(l), { CI: 'true' }, missing))).toMatchObject({ code: 'HR_ERR_HARNESS_CHROMIUM_UNAVAILABLE' });
    expect(lines).toEqual([]);
  });

  it('passes when the binary is there', () => {
    expect(chromiumGuard(() => undefined, { CI: 'true' }, process.execPath)).toBe(true);
  });
});
