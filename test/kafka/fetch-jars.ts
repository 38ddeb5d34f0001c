/** `npm run kafka:jars`: fetch (or confirm cached) the broker jars; CI runs it before the tests. */
import { exitCodeOf } from '../../src/errors.js';
import { ensureKafkaJars } from './jars.js';

try {
  const jars = ensureKafkaJars((line) => console.error(line));
  console.log(`Apache Kafka ${jars.version} jars ${jars.downloaded ? 'fetched into' : 'already cached in'} ${jars.dir}`);
} catch (error) {
  console.error(error instanceof Error ? error.message : String(error));
  process.exit(exitCodeOf(error));
}
