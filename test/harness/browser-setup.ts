/**
 * vitest global setup for the `e2e` project (pages in a real headless Chromium; no broker): checks once
 * that Chromium is there. Under CI=true its absence fails the run; elsewhere the tests that need it are
 * skipped (they guard with inject('chromiumAvailable')) and this says so.
 */
import type { TestProject } from 'vitest/node';
import { chromiumGuard } from './browser.js';

declare module 'vitest' {
  export interface ProvidedContext {
    chromiumAvailable: boolean;
  }
}

export default function setup(project: TestProject): void {
  project.provide('chromiumAvailable', chromiumGuard((line) => void process.stderr.write(`[harness] ${line}\n`)));
}
