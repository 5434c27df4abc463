/** True for the file names Episcope analyses (`*.mdp.json`, `*.mdp.ts`). */
export function isSpecPath(path: string): boolean {
  return path.endsWith('.mdp.json') || path.endsWith('.mdp.ts');
}
