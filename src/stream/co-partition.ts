/**
 * The consumer group's partition assignment when outcome topics are joined: partition p of every topic
 * goes to the same member, so the state of scored partition p also reads outcome partition p and one
 * checkpoint holds both offsets.
 *
 * Why not kafkajs' default. Its RoundRobinAssigner deals the topic-partitions of all topics out in one
 * sequence: with topics A and B of P partitions each and M members, B's partition p goes to member
 * (P + p) mod M while A's p goes to member p mod M. They agree only when M divides P (checked in
 * test/unit/stream/co-partition.test.ts against kafkajs' own assigner). This one gives partition p of
 * every topic to member p mod M (members sorted by id, as kafkajs sorts them), whatever the topics'
 * partition counts. Listed first, with round robin as the fallback the group may agree on while an older
 * member is still in it; the watcher copes with a pairing it did not get (see watcher.ts, onGroupJoin).
 */
import { AssignerProtocol } from 'kafkajs';
import type { PartitionAssigner } from 'kafkajs';

export const CO_PARTITION_ASSIGNER = 'HeadroomCoPartitioned';

/** Pure: member id → topic → partitions. Every member gets an entry, possibly empty. */
export function coPartitionedAssignment(
  memberIds: readonly string[],
  topics: readonly { readonly topic: string; readonly partitions: readonly number[] }[],
): Map<string, Record<string, number[]>> {
  const members = [...memberIds].sort();
  const out = new Map<string, Record<string, number[]>>(members.map((m) => [m, Object.create(null) as Record<string, number[]>]));
  if (members.length === 0) return out;
  for (const { topic, partitions } of topics) {
    for (const p of [...partitions].sort((a, b) => a - b)) {
      const into = out.get(members[p % members.length] as string) as Record<string, number[]>;
      (into[topic] ??= []).push(p);
    }
  }
  return out;
}

export const coPartitionedAssigner: PartitionAssigner = ({ cluster }) => ({
  name: CO_PARTITION_ASSIGNER,
  version: 0,
  async assign({ members, topics }) {
    const layout = topics.map((topic) => ({ topic, partitions: cluster.findTopicPartitionMetadata(topic).map((m) => m.partitionId) }));
    const assignment = coPartitionedAssignment(
      members.map((m) => m.memberId),
      layout,
    );
    return [...assignment].map(([memberId, a]) => ({
      memberId,
      memberAssignment: AssignerProtocol.MemberAssignment.encode({ version: 0, assignment: a, userData: Buffer.alloc(0) }),
    }));
  },
  protocol({ topics }) {
    return { name: CO_PARTITION_ASSIGNER, metadata: AssignerProtocol.MemberMetadata.encode({ version: 0, topics, userData: Buffer.alloc(0) }) };
  },
});
