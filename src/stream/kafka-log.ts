/** kafkajs logs into the watcher's pino logger, one child per kafkajs namespace. */
import { logLevel } from 'kafkajs';
import type { logCreator } from 'kafkajs';
import type { Logger } from 'pino';

export function kafkaLogCreator(logger: Logger): logCreator {
  const children = new Map<string, Logger>();
  return () =>
    ({ namespace, level, log }) => {
      let child = children.get(namespace);
      if (child === undefined) {
        child = logger.child({ kafka: namespace });
        children.set(namespace, child);
      }
      const { message, timestamp: _timestamp, ...extra } = log;
      if (level === logLevel.ERROR) child.error(extra, message);
      else if (level === logLevel.WARN) child.warn(extra, message);
      else if (level === logLevel.INFO) child.info(extra, message);
      else child.debug(extra, message);
    };
}
