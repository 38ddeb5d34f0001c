import { readFileSync } from 'node:fs';
import { z } from 'zod';

// test/reference/compare.json, written by test/reference/gen_compare.py (SciPy and NumPy). Parsed through
// a schema so that a regenerated file with a changed shape fails here by path, not as undefined later.
const ks = z.object({ statistic: z.number(), pvalue: z.number().nullable(), location: z.number(), sign: z.union([z.literal(1), z.literal(-1)]) });
const schema = z.object({
  generatedWith: z.object({ scipy: z.string(), numpy: z.string() }).loose(),
  pairs: z.array(
    z.object({
      name: z.string(),
      a: z.array(z.number()).min(1),
      b: z.array(z.number()).min(1),
      ks_asymp: ks,
      ks_exact: ks.optional(),
      wasserstein: z.number(),
      quantiles: z.array(z.number()),
      quantiles_a: z.array(z.number()),
      quantiles_b: z.array(z.number()),
    }),
  ),
  kstwo_sf: z.array(z.object({ n: z.number().int(), d: z.number(), sf: z.number() })).min(1),
  smirnov_sf: z.array(z.object({ n: z.number().int(), d: z.number(), sf: z.number() })).min(1),
  wilson: z.array(z.object({ k: z.number().int(), n: z.number().int(), low: z.number(), high: z.number() })).min(1),
});

export type CompareFixture = z.infer<typeof schema>;

export const fixture: CompareFixture = schema.parse(
  JSON.parse(readFileSync(new URL('../../reference/compare.json', import.meta.url), 'utf8')),
);
