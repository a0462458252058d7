/**
 * Resolve what the user names as a framework: `gallery:NAME?k=v&...` or a framework file.
 * Reading files is the shell's business: callers pass a reader (fs in the CLI, a File in the app).
 */
import { buildGallery, GALLERY_PREFIX } from './gallery.js';
import type { Framework } from './types.js';
import { parseFramework } from './validate.js';



export function isGallerySpec(spec: string): boolean {
  return spec.startsWith(GALLERY_PREFIX);
}

export function loadFramework(spec: string, readText: (path: string) => string): Framework {
  if (isGallerySpec(spec)) return buildGallery(spec);
  return parseFramework(readText(spec), spec);
}
