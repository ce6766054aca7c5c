/**
 * The top entries of a V8 CPU profile by self time, grouped by function and file:
 * `npx tsx bench/profile-top.ts <file.cpuprofile> [count]`. For the closing notes' before-and-after.
 */
import { readFileSync } from 'node:fs';

interface ProfileNode {
  id: number;
  callFrame: { functionName: string; url: string; lineNumber: number };
  hitCount?: number;
}
interface Profile {
  nodes: ProfileNode[];
  samples: number[];
  timeDeltas: number[];
}

const [file, countArg] = process.argv.slice(2);
if (!file) throw new Error('usage: profile-top.ts <file.cpuprofile> [count]');
const profile = JSON.parse(readFileSync(file, 'utf8')) as Profile;
const byId = new Map(profile.nodes.map((n) => [n.id, n]));
const selfUs = new Map<string, number>();
let total = 0;
profile.samples.forEach((id, i) => {
  const node = byId.get(id);
  const delta = profile.timeDeltas[i] ?? 0;
  if (!node) return;
  const where = node.callFrame.url.replace(/^.*\/(node_modules\/[^/]+|server|bench)\//, '$1/');
  const key = `${node.callFrame.functionName || '(anonymous)'} ${where ? `${where}:${node.callFrame.lineNumber + 1}` : ''}`.trim();
  selfUs.set(key, (selfUs.get(key) ?? 0) + delta);
  total += delta;
});
const top = [...selfUs.entries()].sort((a, b) => b[1] - a[1]).slice(0, Number(countArg ?? 25));
for (const [key, us] of top) console.log(`${((100 * us) / total).toFixed(1).padStart(5)} %  ${key}`);
