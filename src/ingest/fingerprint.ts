import { createHash } from 'node:crypto';
import { createReadStream } from 'node:fs';

/** sha256 of the file's bytes as delivered (compressed bytes for .gz), hex. */
export async function sha256OfFile(filePath: string): Promise<string> {
  const hash = createHash('sha256');
  for await (const chunk of createReadStream(filePath, { highWaterMark: 1 << 20 })) hash.update(chunk as Buffer);
  return hash.digest('hex');
}
