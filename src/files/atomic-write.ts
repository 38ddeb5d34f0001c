/**
 * Write a file so that a reader (or a restart after a crash) sees the old content or the new, never half:
 * a temp file beside the target, fsync, rename over it, then fsync the directory so the rename itself is
 * durable. Errors are passed up as they are; each caller wraps them in its own error code.
 */
import { open, rename, unlink } from 'node:fs/promises';

export async function writeTextAtomically(path: string, text: string, tempPath: string): Promise<void> {
  try {
    const handle = await open(tempPath, 'wx');
    try {
      await handle.writeFile(text, 'utf8');
      await handle.sync();
    } finally {
      await handle.close();
    }
    await rename(tempPath, path);
  } catch (error) {
    await unlink(tempPath).catch(() => undefined);
    throw error;
  }
}
