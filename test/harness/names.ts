import { randomBytes } from 'node:crypto';

/** Topic and group names unique to one test file's run, so files never see each other's messages. */
export function uniqueName(prefix: string): string {
  return `${prefix}-${Date.now().toString(36)}-${randomBytes(4).toString('hex')}`;
}
