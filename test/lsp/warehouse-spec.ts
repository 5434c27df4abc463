/**
 * Large JSON specs for the language-server tests and latency figures, in a scenario of our own
 * (invented numbers): a warehouse robot moving between `count` storage bays. In each bay it may
 * `go` along its aisle (the next bay with probability 0.8; a jam sends it to a bay elsewhere in
 * the warehouse with 0.2) or `hop` to a fixed other bay; each move costs 1. A few bays hold a
 * charging fault (failure); the last bay is the dispatch desk (goal, +50 on arrival). The
 * "elsewhere" bays come from a seeded generator, so the same `count` always gives the same text.
 * One compact transition per line, as generators write them (the 100k-bay spec stays under the
 * 16 MB that the JSON loader reads).
 */
export function warehouseSpecText(count: number, seed = 7): string {
  let state = seed >>> 0;
  // A 32-bit linear congruential generator (Numerical Recipes constants): reproducible, not random-quality.
  const next = (bound: number): number => {
    state = (Math.imul(state, 1664525) + 1013904223) >>> 0;
    return state % bound;
  };
  const name = (i: number): string => (i === count - 1 ? 'desk' : i % 97 === 50 ? `fault${i}` : `b${i}`);
  const lines: string[] = [
    '{',
    '  "name": "warehouse-bays",',
    '  "discount": 0.95,',
    '  "start": "b0",',
    '  "actions": ["go", "hop"],',
    '  "states": {',
  ];
  for (let i = 0; i < count; i++) {
    const id = name(i);
    const kind = id === 'desk' ? 'goal' : id.startsWith('fault') ? 'failure' : undefined;
    lines.push(`  "${id}": {${kind ? `"terminal": "${kind}"` : ''}}${i + 1 < count ? ',' : ''}`);
  }
  lines.push('  },', '  "transitions": [');
  const rows: string[] = [];
  for (let i = 0; i < count - 1; i++) {
    const id = name(i);
    if (id.startsWith('fault')) continue;
    const ahead = name(i + 1);
    const jam = name(next(count - 1));
    const go = jam === ahead ? `"${ahead}"` : `{"${ahead}":0.8,"${jam}":0.2}`;
    const reward = (target: string): string => (target === 'desk' ? '49' : '-1');
    rows.push(`  {"from":"${id}","action":"go","to":${go},"reward":${reward(ahead)}}`);
    const other = name(next(count));
    rows.push(`  {"from":"${id}","action":"hop","to":"${other}","reward":${reward(other)}}`);
  }
  lines.push(rows.join(',\n'), '  ]', '}', '');
  return lines.join('\n');
}
