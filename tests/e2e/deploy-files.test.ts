/**
 * The deployment files in deploy/: every YAML document parses, the alert rules follow the
 * conventions and agree with the alert catalogue in code, the Kubernetes objects have the
 * probes, security settings and secrets they need, the ConfigMap holds a valid config, the
 * systemd unit has its hardening keys (and passes `systemd-analyze verify` when available),
 * and the container image runs as a non-root user.
 */
import { spawnSync } from 'node:child_process';
import { chmodSync, mkdtempSync, readdirSync, readFileSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, relative } from 'node:path';
import { fileURLToPath } from 'node:url';
import { parseAllDocuments, parse } from 'yaml';
import { describe, expect, it } from 'vitest';
import { parseConfig } from '../../src/config/index.ts';
import { ALL_ALERTS, DEFAULT_RUNBOOK_URL, alertNameFor, runbookAnchor } from '../../src/exporter/index.ts';
import { CHECK_KIND, DATASET_CHECKS, type CheckName } from '../../src/report/contract.ts';
import { findExecutable } from '../support/tools.ts';

const ROOT = fileURLToPath(new URL('../../', import.meta.url));
const DEPLOY = join(ROOT, 'deploy');
const read = (p: string) => readFileSync(join(DEPLOY, p), 'utf8');

function walk(dir: string): string[] {
  return readdirSync(dir).flatMap((name) => {
    const p = join(dir, name);
    return statSync(p).isDirectory() ? walk(p) : [p];
  });
}

describe('every YAML file in deploy/', () => {
  const files = walk(DEPLOY).filter((p) => /\.ya?ml$/.test(p));

  it('finds the shipped YAML files', () => {
    expect(files.map((f) => relative(DEPLOY, f)).sort()).toEqual(
      expect.arrayContaining([
        'kubernetes/configmap.yaml',
        'kubernetes/deployment.yaml',
        'kubernetes/service.yaml',
        'prometheus/plumbline.rules.test.yml',
        'prometheus/plumbline.rules.yml',
        'prometheus/prometheus.example.yml',
        'prometheus/scrape.yml',
      ]),
    );
  });

  it.each(files.map((f) => [relative(DEPLOY, f), f]))('%s parses without errors or warnings', (_name, file) => {
    const docs = parseAllDocuments(readFileSync(file, 'utf8'), { uniqueKeys: true });
    for (const doc of docs) {
      expect(doc.errors.map((e) => e.message)).toEqual([]);
      expect(doc.warnings.map((e) => e.message)).toEqual([]);
      expect(doc.toJS()).not.toBeNull();
    }
  });
});

interface Rule {
  alert: string;
  expr: string;
  for?: string;
  labels?: Record<string, string>;
  annotations?: Record<string, string>;
}

describe('the alert rules', () => {
  const rules = (parse(read('prometheus/plumbline.rules.yml')) as { groups: { rules: Rule[] }[] }).groups.flatMap((g) => g.rules);
  const runbook = read('RUNBOOK.md');
  // GitHub-style anchors of the runbook's headings.
  const anchors = new Set([...runbook.matchAll(/^#{1,6} (.+)$/gm)].map((m) => m[1]!.trim().toLowerCase().replace(/[^a-z0-9 _-]/g, '').replace(/ /g, '-')));

  it('defines exactly the alerts of the catalogue in code', () => {
    expect(rules.length).toBeGreaterThan(0);
    expect([...new Set(rules.map((r) => r.alert))].sort()).toEqual([...ALL_ALERTS].sort());
  });

  it.each(rules.map((r, i) => [`${r.alert} #${i}`, r] as const))('%s follows the conventions', (_name, r) => {
    expect(r.alert).toMatch(/^Plumbline[A-Z][A-Za-z]+$/);
    expect(r.for).toMatch(/^\d+[smhd]$/);
    expect(['page', 'ticket']).toContain(r.labels?.severity);
    expect(r.annotations?.summary).toBeTruthy();
    // Templated with the alert's labels or value; an absent() alert has neither to show.
    if (!r.expr.trim().startsWith('absent(')) expect(r.annotations?.description).toMatch(/\{\{ [^}]*\$(labels|value)[^}]*\}\}/);
    else expect(r.annotations?.description).toBeTruthy();
    const url = r.annotations?.runbook_url ?? '';
    expect(url.startsWith(`${DEFAULT_RUNBOOK_URL}#`)).toBe(true);
    const anchor = url.slice(url.indexOf('#') + 1);
    expect(anchor).toBe(runbookAnchor(r.alert));
    expect(anchors.has(anchor), `RUNBOOK.md has no section #${anchor}`).toBe(true);
  });

  it('routes every check to the alert the direct Alertmanager push uses for it', () => {
    /** The finding alerts a check is selected by, reading the `check` matchers of each expression. */
    function alertsSelecting(check: string): string[] {
      const out = new Set<string>();
      for (const r of rules) {
        const matchers = [...r.expr.matchAll(/check(=~|!~|!=|=)"([^"]*)"/g)];
        if (matchers.length === 0) continue;
        const selected = matchers.every(([, op, v]) => {
          const re = new RegExp(`^(?:${v})$`);
          if (op === '=') return check === v;
          if (op === '!=') return check !== v;
          if (op === '=~') return re.test(check);
          return !re.test(check);
        });
        // Feature checks only match rules on plumbline_feature_*, dataset checks on plumbline_dataset_*.
        const family = (DATASET_CHECKS as readonly string[]).includes(check) ? 'plumbline_dataset_check_alerting' : 'plumbline_feature_check_alerting';
        if (selected && r.expr.includes(family)) out.add(r.alert);
      }
      return [...out];
    }
    for (const check of Object.keys(CHECK_KIND)) {
      expect(alertsSelecting(check), check).toEqual([alertNameFor(check as CheckName)]);
    }
  });

  it('gives each finding alert a page rule at level 2 and a ticket rule at level 1', () => {
    for (const name of new Set(rules.filter((r) => r.expr.includes('_check_alerting')).map((r) => r.alert))) {
      const own = rules.filter((r) => r.alert === name);
      expect(own.map((r) => [r.labels?.severity, /== (\d)\s*$/.exec(r.expr.trim())?.[1]]).sort()).toEqual([
        ['page', '2'],
        ['ticket', '1'],
      ]);
    }
  });
});

describe('the Prometheus configs', () => {
  it('scrape.yml and prometheus.example.yml define the same plumbline job', () => {
    const snippet = parse(read('prometheus/scrape.yml')) as { scrape_configs: Record<string, unknown>[] };
    const example = parse(read('prometheus/prometheus.example.yml')) as { scrape_configs: Record<string, unknown>[]; rule_files: string[] };
    expect(snippet.scrape_configs).toHaveLength(1);
    expect(snippet.scrape_configs[0]).toMatchObject({ job_name: 'plumbline', metrics_path: '/metrics', static_configs: [{ targets: ['127.0.0.1:9467'] }] });
    expect(example.scrape_configs.find((j) => j.job_name === 'plumbline')).toEqual(snippet.scrape_configs[0]);
    expect(example.rule_files).toEqual(['plumbline.rules.yml']);
  });
});

interface K8sObject {
  apiVersion: string;
  kind: string;
  metadata: { name: string; labels?: Record<string, string>; annotations?: Record<string, string> };
  spec?: any;
  data?: Record<string, string>;
}

describe('the Kubernetes manifests', () => {
  const objects: K8sObject[] = readdirSync(join(DEPLOY, 'kubernetes'))
    .filter((f) => f.endsWith('.yaml') && f !== 'kustomization.yaml' && !f.includes('example'))
    .flatMap((f) => parseAllDocuments(read(`kubernetes/${f}`)).map((d) => d.toJS() as K8sObject));
  const byKind = (kind: string) => objects.filter((o) => o.kind === kind);
  const deployment = byKind('Deployment')[0]!;
  const pod = deployment?.spec?.template;
  const container = pod?.spec?.containers?.[0];

  it('has a Deployment, a Service and a ConfigMap, all listed in the kustomization', () => {
    expect(objects.map((o) => `${o.apiVersion} ${o.kind}`).sort()).toEqual(['apps/v1 Deployment', 'v1 ConfigMap', 'v1 Service']);
    const kustomization = parse(read('kubernetes/kustomization.yaml')) as { resources: string[] };
    expect(kustomization.resources.sort()).toEqual(['configmap.yaml', 'deployment.yaml', 'service.yaml']);
  });

  it('probes /healthz for liveness and /readyz for readiness on the HTTP port', () => {
    expect(container.ports).toEqual([{ name: 'http', containerPort: 9467, protocol: 'TCP' }]);
    expect(container.livenessProbe.httpGet).toEqual({ path: '/healthz', port: 'http' });
    expect(container.readinessProbe.httpGet).toEqual({ path: '/readyz', port: 'http' });
  });

  it('runs as non-root with a read-only root filesystem and no privileges', () => {
    expect(pod.spec.securityContext).toMatchObject({ runAsNonRoot: true, seccompProfile: { type: 'RuntimeDefault' } });
    expect(pod.spec.securityContext.runAsUser).toBeGreaterThan(0);
    expect(container.securityContext).toMatchObject({ runAsNonRoot: true, readOnlyRootFilesystem: true, allowPrivilegeEscalation: false, capabilities: { drop: ['ALL'] } });
    expect(pod.spec.automountServiceAccountToken).toBe(false);
    // The only writable place is an emptyDir at /tmp.
    expect(container.volumeMounts).toEqual(expect.arrayContaining([{ name: 'tmp', mountPath: '/tmp' }]));
  });

  it('takes the connection URLs from a Secret and the config from the ConfigMap', () => {
    const env = Object.fromEntries((container.env as { name: string; valueFrom?: any }[]).map((e) => [e.name, e.valueFrom]));
    expect(env.PLUMBLINE_SOURCE_URL).toEqual({ secretKeyRef: { name: 'plumbline-db', key: 'source-url' } });
    expect(env.PLUMBLINE_STORE_URL).toEqual({ secretKeyRef: { name: 'plumbline-db', key: 'store-url' } });
    expect(container.args).toEqual(['--config', '/etc/plumbline/plumbline.yaml']);
    expect(container.volumeMounts).toEqual(expect.arrayContaining([{ name: 'config', mountPath: '/etc/plumbline', readOnly: true }]));
    expect(pod.spec.volumes).toEqual(expect.arrayContaining([{ name: 'config', configMap: { name: 'plumbline-config' } }]));
    const secret = parse(read('kubernetes/secret.example.yaml')) as K8sObject & { stringData: Record<string, string> };
    expect(secret.metadata.name).toBe('plumbline-db');
    expect(Object.keys(secret.stringData).sort()).toEqual(['source-url', 'store-url']);
  });

  it('asks Prometheus to scrape each pod on the metrics port', () => {
    expect(pod.metadata.annotations).toEqual({ 'prometheus.io/scrape': 'true', 'prometheus.io/port': '9467', 'prometheus.io/path': '/metrics' });
  });

  it('routes the Service to the pods', () => {
    const service = byKind('Service')[0]!;
    expect(service.spec.selector).toEqual(deployment.spec.selector.matchLabels);
    expect(pod.metadata.labels).toMatchObject(deployment.spec.selector.matchLabels);
    expect(service.spec.ports).toEqual([{ name: 'http', port: 9467, targetPort: 'http', protocol: 'TCP' }]);
  });

  it('ships a config that Plumbline accepts, listening on all pod interfaces and saying why', () => {
    const configMap = byKind('ConfigMap')[0]!;
    expect(configMap.metadata.name).toBe('plumbline-config');
    const text = configMap.data!['plumbline.yaml']!;
    const config = parseConfig(parse(text), 'configmap plumbline.yaml');
    expect(config.http).toMatchObject({ host: '0.0.0.0', port: 9467, manualRuns: { enabled: false } });
    // The comment right above `host:` explains why it is not the default 127.0.0.1.
    const before = text.slice(0, text.indexOf('host: 0.0.0.0'));
    expect(before).toMatch(/# .*127\.0\.0\.1[\s\S]*probe/);
  });
});

/** A minimal INI reader for unit files: sections, `Key=Value`, comments, repeated keys kept in order. */
function parseUnit(text: string): Map<string, Map<string, string[]>> {
  const sections = new Map<string, Map<string, string[]>>();
  let current: Map<string, string[]> | undefined;
  for (const raw of text.split('\n')) {
    const line = raw.trim();
    if (line === '' || line.startsWith('#') || line.startsWith(';')) continue;
    const header = /^\[([^\]]+)\]$/.exec(line);
    if (header) {
      current = new Map();
      sections.set(header[1]!, current);
      continue;
    }
    const eq = line.indexOf('=');
    if (eq < 0 || current === undefined) throw new Error(`not a unit file line: ${line}`);
    const key = line.slice(0, eq).trim();
    current.set(key, [...(current.get(key) ?? []), line.slice(eq + 1).trim()]);
  }
  return sections;
}

describe('the systemd unit', () => {
  const text = read('systemd/plumbline.service');
  const unit = parseUnit(text);
  const service = unit.get('Service')!;
  const one = (key: string) => service.get(key)?.at(-1);

  it('has the three sections', () => {
    expect([...unit.keys()]).toEqual(['Unit', 'Service', 'Install']);
    expect(unit.get('Install')!.get('WantedBy')).toEqual(['multi-user.target']);
  });

  it('starts plumbline serve with the config file and restarts on failure', () => {
    expect(one('ExecStart')).toBe('/usr/bin/plumbline serve --config /etc/plumbline/plumbline.yaml');
    expect(one('Restart')).toBe('on-failure');
    expect(one('EnvironmentFile')).toBe('/etc/plumbline/plumbline.env');
  });

  it('is hardened', () => {
    expect(one('NoNewPrivileges')).toBe('yes');
    expect(one('ProtectSystem')).toBe('strict');
    expect(one('ProtectHome')).toBe('yes');
    expect(one('PrivateTmp')).toBe('yes');
    expect(one('DynamicUser') === 'yes' || (one('User') ?? 'root') !== 'root').toBe(true);
    expect(service.get('CapabilityBoundingSet')).toEqual(['']);
  });

  it('starts the command package.json installs (npm install -g --prefix /usr puts it at /usr/bin)', () => {
    const bins = (JSON.parse(readFileSync(join(ROOT, 'package.json'), 'utf8')) as { bin: Record<string, string> }).bin;
    expect(Object.keys(bins)).toContain(one('ExecStart')!.split(' ')[0]!.split('/').at(-1));
  });

  const analyze = findExecutable('systemd-analyze');
  if (analyze === undefined && process.env['CI'] === 'true') {
    it('needs systemd-analyze', () => {
      throw new Error("systemd-analyze is not installed; CI must install Debian's systemd package (.ci/run does)");
    });
  } else if (analyze === undefined) {
    it.skip('passes systemd-analyze verify (skipped: systemd-analyze is not installed; Debian package systemd)', () => undefined);
  } else {
    it('passes systemd-analyze verify without a warning', () => {
      // verify insists that ExecStart's program exists: point it at a stand-in script in a
      // copy of the unit, everything else unchanged.
      const dir = mkdtempSync(join(tmpdir(), 'plumbline-unit-'));
      try {
        const stand = join(dir, 'plumbline');
        writeFileSync(stand, '#!/bin/sh\nexit 0\n');
        chmodSync(stand, 0o755);
        const copy = join(dir, 'plumbline.service');
        writeFileSync(copy, text.replace('ExecStart=/usr/bin/plumbline ', `ExecStart=${stand} `));
        const r = spawnSync(analyze, ['verify', copy], { encoding: 'utf8', timeout: 60_000 });
        const out = `${r.stdout}${r.stderr}`;
        // Only lines about our unit count (the host's own units may have warnings of their own).
        expect(out.split('\n').filter((l) => l.includes('plumbline'))).toEqual([]);
        expect(r.status).toBe(0);
      } finally {
        rmSync(dir, { recursive: true, force: true });
      }
    });
  }
});

describe('the Containerfile', () => {
  const text = read('container/Containerfile');
  const instructions = text
    .replace(/\\\n/g, ' ')
    .split('\n')
    .map((l) => l.trim())
    .filter((l) => l !== '' && !l.startsWith('#'));
  const lastStage = instructions.slice(instructions.map((l) => l.startsWith('FROM ')).lastIndexOf(true));

  it('builds from the Node 20 slim image by name', () => {
    const froms = instructions.filter((l) => l.startsWith('FROM '));
    expect(froms.length).toBeGreaterThan(0);
    for (const f of froms) expect(f).toMatch(/^FROM node:20[-a-z]*slim\b/);
  });

  it('installs production dependencies and builds the code', () => {
    expect(instructions.some((l) => l.startsWith('RUN') && l.includes('npm run build'))).toBe(true);
    expect(lastStage.some((l) => l.startsWith('RUN') && l.includes('npm ci --omit=dev'))).toBe(true);
  });

  it('runs as a numeric non-root user', () => {
    const users = lastStage.filter((l) => l.startsWith('USER '));
    expect(users).toHaveLength(1);
    const user = users[0]!.slice(5).trim().split(':')[0]!;
    expect(user).toMatch(/^\d+$/);
    expect(Number(user)).toBeGreaterThan(0);
  });

  it('starts plumbline serve', () => {
    expect(lastStage).toContain('ENTRYPOINT ["node", "dist/cli.js", "serve"]');
    expect(lastStage).toContain('EXPOSE 9467');
  });
});
