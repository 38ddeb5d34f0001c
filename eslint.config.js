import js from '@eslint/js';
import tseslint from 'typescript-eslint';

export default tseslint.config(
  { ignores: ['dist/**', 'node_modules/**', 'coverage/**', 'test-artifacts/**', '.scratch/**'] },
  js.configs.recommended,
  ...tseslint.configs.recommended,
  {
    rules: {
      '@typescript-eslint/no-unused-vars': ['error', { argsIgnorePattern: '^_', varsIgnorePattern: '^_' }],
      '@typescript-eslint/consistent-type-imports': 'error',
      'no-restricted-syntax': [
        'error',
        { selector: "MemberExpression[object.name='process'][property.name='env'][parent.property.name='NODE_ENV']", message: 'No behaviour that depends on NODE_ENV.' },
      ],
    },
  },
  {
    // The live page's script runs in the browser (src/serve/page); uPlot is the global its own script defines.
    files: ['src/serve/page/**/*.js'],
    languageOptions: {
      sourceType: 'module',
      globals: { window: 'readonly', document: 'readonly', location: 'readonly', fetch: 'readonly', setTimeout: 'readonly', clearTimeout: 'readonly', uPlot: 'readonly' },
    },
  },
  {
    // The pure core never reads the clock, the file system or the network.
    files: [
      'src/events/**',
      'src/margin/**',
      'src/sketch/**',
      'src/compare/**',
      'src/reference/**',
      'src/alerts/**',
      'src/notify/notice.ts',
      'src/notify/backoff.ts',
      'src/notify/config.ts',
      // src/replay's pure parts; run.ts and kafka-range.ts are its I/O edge.
      'src/replay/engine.ts',
      'src/replay/alerts.ts',
      'src/replay/report.ts',
      'src/replay/openmetrics.ts',
      'src/replay/csv.ts',
      'src/replay/cdf.ts',
      'src/replay/html.ts',
      'src/replay/html-script.ts',
      'src/replay/window-spec.ts',
      // src/demo's pure parts; clock.ts, embedded.ts and kafka.ts are its I/O edge.
      'src/demo/parcels.ts',
      'src/demo/scenario.ts',
      'src/demo/config.ts',
      'src/demo/reference.ts',
      'src/demo/pipeline.ts',
      'src/demo/rehearse.ts',
      'src/demo/thresholds.ts',
    ],
    rules: {
      'no-restricted-imports': ['error', { patterns: ['node:fs*', 'fs', 'kafkajs', 'express', 'prom-client', 'node:net', 'node:http'] }],
      'no-restricted-properties': ['error', { object: 'Date', property: 'now', message: 'Pass the time in.' }],
    },
  },
);
