// Which image store the settings ask for (HELIODOR_IMAGE_STORE): the local folder by default, or
// S3-compatible object storage (DEVELOPERS.md "Image store").
import type { Config } from '../config';
import { S3ImageStore } from './s3-store';
import { LocalImageStore, type ImageStore } from './store';

export function createImageStore(config: Pick<Config, 'imageStore' | 'storeDir'>): ImageStore {
  const s = config.imageStore;
  if (s.kind === 's3') return new S3ImageStore({ ...s, spoolDir: undefined });
  return new LocalImageStore(config.storeDir);
}
