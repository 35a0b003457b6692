/**
 * The terminal view of a report: worst first, each problem with its evidence, then a
 * count of what is fine. Status is spelled out, never shown by colour alone.
 */
import { sliceOf, type Finding, type Report } from './contract.ts';

const MARK = { critical: 'CRIT', warn: 'WARN', ok: 'ok' } as const;

function share(x: number): string {
  return `${(x * 100).toFixed(1)}%`;
}

function findingLines(f: Finding): string[] {
  const slice = sliceOf(f);
  const who = `${slice === 'all' ? '' : `[${slice}] `}${f.feature ?? '(dataset)'}`;
  const check = f.rule === null ? f.check : `${f.check}[${f.rule}]`;
  const alert = f.alert.alerting ? ` ALERTING since ${f.alert.since}` : f.status !== 'ok' ? ` (run ${f.alert.consecutiveRuns} in a row)` : '';
  const lines = [`${MARK[f.status].padEnd(4)}  ${who.padEnd(24)} ${check.padEnd(28)} ${f.summary}${alert}`];
  for (const b of f.evidence.bins ?? []) {
    lines.push(`        ${b.bin.padEnd(28)} baseline ${share(b.baselineShare).padStart(6)} -> current ${share(b.currentShare).padStart(6)}  (${b.contribution >= 0 ? '+' : ''}${b.contribution.toFixed(4)})`);
  }
  return lines;
}

export function renderTable(report: Report, options: { all?: boolean } = {}): string {
  const lines: string[] = [];
  const b = report.baseline;
  const c = report.current;
  lines.push(`Plumbline report for ${report.runDate}: ${report.status.toUpperCase()}`);
  lines.push(`  current:  ${c.rows.toLocaleString('en-US')} rows in ${c.lists.toLocaleString('en-US')} lists${c.sampled ? ` (evaluated ${c.evaluatedRows.toLocaleString('en-US')} rows of whole sampled lists)` : ''}`);
  lines.push(
    b.source?.type === 'relation'
      ? `  baseline: relation ${b.source.table} ${b.window.from}..${b.window.to}, ${b.days.length} days with data, ${Math.round(b.meanRowsPerDay).toLocaleString('en-US')} rows/day`
      : `  baseline: ${b.window.type} ${b.window.from}..${b.window.to}, ${b.days.length} days with data, ${Math.round(b.meanRowsPerDay).toLocaleString('en-US')} rows/day`,
  );
  if (report.slices !== undefined && report.slices.length > 0) {
    lines.push(`  slices:   ${report.slices.map((s) => `${s.slice} (${s.rows.toLocaleString('en-US')} rows, ${s.baselineDays} baseline days)`).join(', ')}`);
  }
  lines.push('');
  const problems = report.findings.filter((f) => f.status !== 'ok');
  const shown = options.all === true ? report.findings : problems;
  if (shown.length === 0) lines.push('  no problems found');
  for (const f of shown) lines.push(...findingLines(f));
  const ok = report.findings.length - problems.length;
  if (options.all !== true && ok > 0) lines.push('', `  ${ok} checks ok (--all shows them)`);
  return `${lines.join('\n')}\n`;
}
