import { PartitionAssigners } from 'kafkajs';
import type { Cluster } from 'kafkajs';
import { describe, expect, it } from 'vitest';
import { coPartitionedAssignment } from '../../../src/stream/co-partition.js';
import { planPairs } from '../../../src/stream/outcome-pairs.js';

const key = (t: string, p: number): string => `${t}:${p}`;

/** kafkajs' own RoundRobinAssigner, run on a stub cluster that only answers the partition metadata it asks for. */
async function roundRobin(members: string[], partitions: Record<string, number>): Promise<Map<string, Record<string, number[]>>> {
  const cluster = { findTopicPartitionMetadata: (topic: string) => Array.from({ length: partitions[topic] ?? 0 }, (_, partitionId) => ({ partitionId })) } as unknown as Cluster;
  const assigner = PartitionAssigners.roundRobin({ cluster, groupId: 'g', logger: undefined as never });
  const { AssignerProtocol } = await import('kafkajs');
  const out = await assigner.assign({ members: members.map((memberId) => ({ memberId, memberMetadata: Buffer.alloc(0) })), topics: Object.keys(partitions) });
  return new Map(out.map((a) => [a.memberId, AssignerProtocol.MemberAssignment.decode(a.memberAssignment)?.assignment ?? {}]));
}

function ownerOf(assignment: Map<string, Record<string, number[]>>, topic: string, p: number): string | undefined {
  for (const [member, a] of assignment) if ((a[topic] ?? []).includes(p)) return member;
  return undefined;
}

describe('co-partitioned assignment', () => {
  it('kafkajs round robin splits partition p of two topics when the member count does not divide the partitions', async () => {
    const rr = await roundRobin(['m1', 'm2', 'm3', 'm4'], { scored: 6, outcomes: 6 });
    const split = [0, 1, 2, 3, 4, 5].filter((p) => ownerOf(rr, 'scored', p) !== ownerOf(rr, 'outcomes', p));
    expect(split.length).toBeGreaterThan(0);
  });

  it('gives partition p of every topic to one member, for any member count', () => {
    for (const members of [1, 2, 4, 5, 7]) {
      const ids = Array.from({ length: members }, (_, i) => `member-${i}`);
      const a = coPartitionedAssignment(ids, [
        { topic: 'scored', partitions: [0, 1, 2, 3, 4, 5] },
        { topic: 'outcomes', partitions: [5, 4, 3, 2, 1, 0] },
      ]);
      for (let p = 0; p < 6; p += 1) expect(ownerOf(a, 'outcomes', p), `${members} members, p=${p}`).toBe(ownerOf(a, 'scored', p));
      const all = [...a.values()].flatMap((x) => [...(x.scored ?? []), ...(x.outcomes ?? [])]);
      expect(all).toHaveLength(12);
    }
  });

  it('plans which outcome partitions to read, pause, or miss', () => {
    const scoredOf = new Map([['outcomes', 'scored']]);
    const outcomeOf = new Map([['scored', 'outcomes']]);
    const plan = planPairs({ scored: [0, 1], outcomes: [1, 2] }, scoredOf, outcomeOf, key);
    expect(plan.read).toEqual([{ topic: 'outcomes', partition: 1, stateKey: 'scored:1' }]);
    expect(plan.unpaired).toEqual([{ topic: 'outcomes', partition: 2 }]);
    expect(plan.alone).toEqual([{ topic: 'scored', partition: 0 }]);
  });
});
