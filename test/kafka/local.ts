/**
 * `npm run kafka:local`: a real single-node Kafka in the foreground for trying headroom without Docker.
 * Prints its bootstrap address as `127.0.0.1:PORT`; Ctrl-C (or SIGTERM) stops it and removes its data.
 */
import { exitCodeOf } from '../../src/errors.js';
import { startLocalBroker } from './broker.js';

async function main(): Promise<void> {
  console.error('starting a local Apache Kafka broker (KRaft, single node)...');
  const broker = await startLocalBroker({ log: (line) => console.error(line) });
  console.error(`Apache Kafka ${broker.version} ready in ${(broker.startMs / 1000).toFixed(1)} s; data in ${broker.dataDir} (removed on stop)`);
  console.log(broker.bootstrap);
  console.error('press Ctrl-C to stop');
  const shutdown = (): void => {
    console.error('stopping the broker...');
    void broker.stop().then(() => process.exit(0));
  };
  process.once('SIGINT', shutdown);
  process.once('SIGTERM', shutdown);
}

main().catch((error: unknown) => {
  console.error(error instanceof Error ? error.message : String(error));
  process.exit(exitCodeOf(error));
});
