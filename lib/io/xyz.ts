import { CrowntallyError } from '../errors.js';
import type { ByteSource, CrsInfo, PointCloud } from './types.js';

// Placeholder with the final signature; the text reader replaces the body.
export async function openXyz(_source: ByteSource, _opts: { crs?: CrsInfo } = {}): Promise<PointCloud> {
  throw new CrowntallyError('UNSUPPORTED', 'XYZ text is not read yet');
}
