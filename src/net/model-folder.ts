/**
 * Node edge: reads a TensorFlow.js layers-model folder (model.json plus its .bin weight files) from
 * disk, with no network, through model-json.ts.
 */
import { readFileSync, readdirSync, statSync } from 'node:fs';
import { join } from 'node:path';
import type { DenseLayer } from '../../formats/types.ts';
import { denseLayersFromModelJson, ModelFolderError } from './model-json.ts';

export { denseLayersFromModelJson, ModelFolderError } from './model-json.ts';

/**
 * The dense layers of the model in `folder`. Errors name model.json or the weight file concerned,
 * and what was expected there.
 */
export function loadModelFolder(folder: string): DenseLayer[] {
  const jsonPath = join(folder, 'model.json');
  let text: string;
  try {
    text = readFileSync(jsonPath, 'utf8');
  } catch (e) {
    const code = (e as NodeJS.ErrnoException).code;
    if (code === 'ENOENT') {
      throw new ModelFolderError(folder, `has no model.json; expected a TensorFlow.js layers-model folder (model.json and its .bin weight files)${folderContents(folder)}`);
    }
    throw new ModelFolderError(jsonPath, `cannot be read (${code ?? (e as Error).message})`);
  }
  let json: unknown;
  try {
    json = JSON.parse(text);
  } catch (e) {
    throw new ModelFolderError(jsonPath, `is not JSON (${(e as Error).message})`);
  }
  return denseLayersFromModelJson(json, jsonPath, (path) => {
    const binPath = join(folder, path);
    try {
      return readFileSync(binPath);
    } catch (e) {
      const code = (e as NodeJS.ErrnoException).code;
      throw new ModelFolderError(binPath, code === 'ENOENT' ? "no such file; model.json's weightsManifest lists it" : `cannot be read (${code ?? (e as Error).message})`);
    }
  }, (path) => join(folder, path));
}

/** " (it holds: a, b, …)" for an error about a folder, or "" when it cannot be listed. */
export function folderContents(folder: string): string {
  try {
    if (!statSync(folder).isDirectory()) return '';
    const names = readdirSync(folder).sort();
    if (names.length === 0) return ' (the folder is empty)';
    return ` (it holds: ${names.slice(0, 6).join(', ')}${names.length > 6 ? `, … ${names.length} entries` : ''})`;
  } catch {
    return '';
  }
}

