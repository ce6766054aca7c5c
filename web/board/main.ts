import '../shared/base.css';
import './board.css';
import type uPlot from 'uplot';
import { api, ApiError, getPlant, signIn, signOut, whoAmI, type Alert, type AlertSummary, type Check, type Line, type Plant, type Status, type User } from '../shared/api.js';
import { meanChart, meanChartData, spreadChart, type ChartPoint } from '../shared/charts.js';
import { alertTitle, clock, dateTime, duration, el, overUnder, stopWords, weight } from '../shared/format.js';
import { LiveClient, type LiveMessage } from '../shared/live.js';
import { alertItem, renderRunControls } from './cards.js';
import { dueWords, twoToneChime } from './words-and-sound.js';

const $ = <T extends HTMLElement>(id: string) => document.getElementById(id) as T;
const MAX_POINTS = 60;

interface LineView {
  line: Line;
  status: Status | null;
  points: ChartPoint[];
  alerts: Map<number, Alert>;
  /** Checks that raised a signal: marked on the charts. */
  signalled: Set<number>;
  tile: HTMLElement | null;
  chart: uPlot | null;
}

const board: {
  plant: Plant;
  user: User | null;
  lines: Map<number, LineView>;
  connected: boolean;
  lastMessageAt: number | null;
  sound: boolean;
  detailLine: number | null;
  live: LiveClient | null;
} = { plant: { name: 'Heft', timeZone: 'UTC' }, user: null, lines: new Map(), connected: false, lastMessageAt: null, sound: localStorage.getItem('heft.board.sound') === 'on', detailLine: null, live: null };

const STATUS_SHAPES: Record<string, string> = { steady: '●', watch: '▲', act: '■', idle: '○' };

function problem(text: string | null): void {
  $('problem').textContent = text ?? '';
  $('problem').classList.toggle('hidden', !text);
}

// ------------------------------------------------------------------ loading

const SOURCE_WORDS: Record<string, string> = { keyed: 'typed', scale: 'from the tablet’s scale', bridge: 'from the scale bridge', checkweigher: 'from the checkweigher' };

function toPoint(c: Check): ChartPoint {
  return { checkId: c.id, at: Date.parse(c.takenAt) / 1000, mean: c.mean, n: c.n, sd: c.sd, range: c.range, source: c.source };
}

async function loadLine(line: Line): Promise<LineView> {
  const since = line.runStartedAt ? `&from=${encodeURIComponent(line.runStartedAt)}` : '';
  const [status, checks, alerts] = await Promise.all([
    api<{ status: Status }>('GET', `/api/lines/${line.id}/status`).then((r) => r.status),
    api<{ checks: Check[] }>('GET', `/api/lines/${line.id}/checks?limit=${MAX_POINTS}${since}`).then((r) => r.checks),
    api<{ alerts: Alert[] }>('GET', `/api/alerts?lineId=${line.id}&limit=200${since}`).then((r) => r.alerts),
  ]);
  const unresolved = status.openAlerts;
  const all = new Map<number, Alert>(alerts.map((a) => [a.id, a]));
  for (const a of unresolved) all.set(a.id, a);
  const signalled = new Set([...all.values()].flatMap((a) => a.signals.map((s) => s.checkId ?? -1)));
  return { line, status, points: checks.map(toPoint), alerts: all, signalled, tile: null, chart: null };
}

async function loadAll(): Promise<void> {
  const { lines } = await api<{ lines: Line[] }>('GET', '/api/lines');
  const views = await Promise.all(lines.map(loadLine));
  for (const old of board.lines.values()) old.chart?.destroy();
  board.lines = new Map(views.map((v) => [v.line.id, v]));
  const filter = $<HTMLSelectElement>('filter-line');
  const chosen = filter.value;
  filter.replaceChildren(el('option', { value: '' }, 'all'), ...lines.map((l) => el('option', { value: String(l.id) }, `${l.code} — ${l.name}`)));
  filter.value = chosen;
  renderTiles();
  if (board.detailLine !== null) renderDetail();
}

// ------------------------------------------------------------------ tiles

function visibleAlerts(v: LineView): Alert[] {
  const mode = $<HTMLSelectElement>('filter-state').value;
  const list = [...v.alerts.values()].filter((a) => (mode === 'all' ? true : mode === 'open' ? a.state === 'open' : a.state !== 'resolved'));
  return list.sort((a, b) => (a.severity === b.severity ? Date.parse(b.openedAt) - Date.parse(a.openedAt) : a.severity === 'act' ? -1 : 1));
}

function lineState(v: LineView): 'steady' | 'watch' | 'act' | 'idle' {
  if (!v.status?.product) return 'idle';
  const open = [...v.alerts.values()].filter((a) => a.state !== 'resolved');
  if (open.some((a) => a.severity === 'act')) return 'act';
  return open.length > 0 ? 'watch' : 'steady';
}

function renderTile(v: LineView): HTMLElement {
  const state = lineState(v);
  const p = v.status?.product ?? null;
  const last = v.points[v.points.length - 1];
  const tile = el('article', { class: `tile ${state}`, 'data-line': String(v.line.id), tabindex: '0', 'aria-label': `${v.line.code} ${v.line.name}: ${state}` });
  tile.append(
    el('div', { class: 'tile-head' }, el('span', { class: 'name' }, `${v.line.code} ${v.line.name}`), el('span', { class: `status status-${state}` }, el('span', { class: 'shape', 'aria-hidden': 'true' }, STATUS_SHAPES[state] ?? ''), ` ${state}`)),
    el('div', { class: 'product' }, p ? `${p.name} · target ${weight(p.target, p.unit)}` : 'no product running'),
  );
  if (p && last) tile.append(el('div', { class: 'mean' }, `last mean ${weight(last.mean, p.unit)} · ${overUnder(last.mean - p.target, p.unit)} target`));
  const chartBox = el('div', { class: 'chart' });
  tile.append(chartBox);
  const stop = v.status?.stop ?? null;
  const due = dueWords(v.status?.nextCheckDue);
  // a line that stands still says why and since when instead of when its next check is due
  if (stop) tile.append(el('div', { class: 'due stopped', 'data-stopped': '' }, stopWords(stop, board.plant.timeZone)));
  else tile.append(el('div', { class: `due${due.late ? ' late' : ''}`, 'data-due': '' }, due.text));
  const list = el('div', { class: 'alert-list' });
  for (const a of visibleAlerts(v).slice(0, 3)) list.append(alertItem(a, v.status?.product?.unit ?? 'g', board.plant.timeZone, act));
  tile.append(list);
  tile.addEventListener('click', () => openDetail(v.line.id));
  tile.addEventListener('keydown', (e) => {
    if (e.key === 'Enter' && e.target === tile) openDetail(v.line.id);
  });
  v.tile = tile;
  return tile;
}

function drawTileChart(v: LineView): void {
  v.chart?.destroy();
  v.chart = null;
  const limits = v.status?.limits;
  const box = v.tile?.querySelector('.chart') as HTMLElement | null;
  if (!limits || !box || v.points.length === 0) return;
  const signalled = v.signalled;
  const width = Math.max(200, box.clientWidth);
  v.chart = meanChart(box, width, Math.max(90, Math.min(180, Math.round(width * 0.32))), meanChartData(v.points.slice(-MAX_POINTS), limits.centre, limits.sigma, signalled, true), true);
}

function renderTiles(): void {
  const filter = $<HTMLSelectElement>('filter-line').value;
  const views = [...board.lines.values()].filter((v) => !filter || String(v.line.id) === filter);
  const tiles = $('tiles');
  const n = views.length;
  // 1–24 lines on a 1920×1080 wall: as square a grid as fits, larger type for fewer lines
  const cols = n <= 1 ? 1 : n <= 4 ? 2 : n <= 9 ? 3 : n <= 16 ? 4 : n <= 20 ? 5 : 6;
  tiles.style.setProperty('--cols', String(cols));
  tiles.style.setProperty('--scale', String(n <= 4 ? 1.5 : n <= 9 ? 1.25 : n <= 16 ? 1.05 : 0.9));
  for (const v of board.lines.values()) v.chart?.destroy();
  tiles.replaceChildren(...views.map(renderTile));
  for (const v of views) drawTileChart(v);
}

function refreshTile(v: LineView): void {
  if (!v.tile || !v.tile.isConnected) {
    renderTiles();
    return;
  }
  const old = v.tile;
  v.chart?.destroy();
  const fresh = renderTile(v);
  old.replaceWith(fresh);
  drawTileChart(v);
  if (board.detailLine === v.line.id) renderDetail();
}

// ------------------------------------------------------------------ detail

let detailCharts: uPlot[] = [];

function openDetail(lineId: number): void {
  board.detailLine = lineId;
  $('tiles').classList.add('hidden');
  $('detail').classList.remove('hidden');
  renderDetail();
  $('detail-close').focus();
}

$('detail-close').addEventListener('click', () => {
  board.detailLine = null;
  for (const c of detailCharts) c.destroy();
  detailCharts = [];
  $('detail').classList.add('hidden');
  $('tiles').classList.remove('hidden');
  renderTiles();
});

function renderDetail(): void {
  const v = board.lines.get(board.detailLine ?? -1);
  if (!v) return;
  const p = v.status?.product;
  $('detail-title').textContent = `${v.line.code} ${v.line.name}${p ? ` — ${p.name}` : ''} · ${lineState(v)}`;
  renderRunControls($('detail-run'), v.line.id, v.status?.stop ?? null, board.user !== null, board.plant.timeZone, problem);
  for (const c of detailCharts) c.destroy();
  detailCharts = [];
  const limits = v.status?.limits;
  const meanBox = $('detail-mean');
  const spreadBox = $('detail-spread');
  meanBox.replaceChildren();
  spreadBox.replaceChildren();
  if (limits && v.points.length > 0) {
    const signalled = v.signalled;
    const width = Math.max(320, meanBox.clientWidth || 600);
    detailCharts.push(meanChart(meanBox, width, 320, meanChartData(v.points, limits.centre, limits.sigma, signalled)));
    $('spread-caption').textContent = `${limits.spreadChart.chart === 'S' ? 'Standard deviation' : limits.spreadChart.chart === 'R' ? 'Range' : 'Moving range'} of each check with its upper limit`;
    detailCharts.push(spreadChart(spreadBox, width, 320, v.points, limits.spreadChart.chart, () => limits.spreadChart.ucl));
  }
  const counts = new Map<string, number>();
  for (const pt of v.points) counts.set(pt.source ?? 'keyed', (counts.get(pt.source ?? 'keyed') ?? 0) + 1);
  $('detail-sources').textContent = counts.size ? `Checks in this run: ${[...counts].map(([s, n]) => `${n} ${SOURCE_WORDS[s] ?? s}`).join(', ')}; the last ${SOURCE_WORDS[v.points[v.points.length - 1]?.source ?? 'keyed']}.` : '';
  const list = $('detail-alerts');
  const all = [...v.alerts.values()].sort((a, b) => Date.parse(b.openedAt) - Date.parse(a.openedAt));
  list.replaceChildren(...(all.length ? all.map((a) => alertItem(a, v.status?.product?.unit ?? 'g', board.plant.timeZone, act)) : [el('p', { class: 'muted' }, 'No alerts in this run.')]));
}

// ------------------------------------------------------------------ acting on alerts

async function act(a: Alert, what: 'acknowledge' | 'resolve'): Promise<void> {
  if (!board.user) {
    const ok = await askSignIn();
    if (!ok) return;
  }
  const dialog = $<HTMLDialogElement>('act');
  $('act-title').textContent = `${what === 'acknowledge' ? 'Acknowledge' : 'Resolve'}: ${alertTitle(a.kind, a.direction)}`;
  $('act-summary').textContent = `${board.lines.get(a.lineId)?.line.code ?? ''} · ${a.ruleWords.join(', ')} · opened ${dateTime(a.openedAt, board.plant.timeZone)}`;
  $('act-note-row').classList.toggle('hidden', what !== 'acknowledge');
  $('act-resolve-rows').classList.toggle('hidden', what !== 'resolve');
  for (const id of ['act-note', 'act-cause', 'act-action']) $<HTMLTextAreaElement>(id).value = '';
  $('act-problem').classList.add('hidden');
  dialog.showModal();
  $(what === 'acknowledge' ? 'act-note' : 'act-cause').focus();
  $('act-cancel').onclick = () => dialog.close();
  $<HTMLFormElement>('act-form').onsubmit = async (event) => {
    event.preventDefault();
    const body =
      what === 'acknowledge'
        ? { note: $<HTMLTextAreaElement>('act-note').value.trim() }
        : { cause: $<HTMLTextAreaElement>('act-cause').value.trim(), action: $<HTMLTextAreaElement>('act-action').value.trim() };
    const empty = Object.entries(body).find(([, value]) => !value);
    if (empty) {
      $('act-problem').textContent = `Say the ${empty[0]}.`;
      $('act-problem').classList.remove('hidden');
      return;
    }
    try {
      const { alert } = await api<{ alert: Alert }>('POST', `/api/alerts/${a.id}/${what}`, body);
      applyAlert(alert);
      dialog.close();
    } catch (err) {
      $('act-problem').textContent = err instanceof ApiError ? (err.body?.message ?? err.message) : 'The server cannot be reached.';
      $('act-problem').classList.remove('hidden');
    }
  };
}

function askSignIn(): Promise<boolean> {
  const dialog = $<HTMLDialogElement>('signin');
  $('si-problem').classList.add('hidden');
  dialog.showModal();
  $('si-user').focus();
  return new Promise((resolve) => {
    $('si-cancel').onclick = () => {
      dialog.close();
      resolve(false);
    };
    $<HTMLFormElement>('signin-form').onsubmit = async (event) => {
      event.preventDefault();
      try {
        board.user = await signIn($<HTMLInputElement>('si-user').value.trim(), $<HTMLInputElement>('si-secret').value);
        $<HTMLInputElement>('si-secret').value = '';
        showUser();
        dialog.close();
        resolve(true);
      } catch (err) {
        $('si-problem').textContent = err instanceof ApiError ? (err.body?.message ?? 'Sign-in failed') : 'The server cannot be reached.';
        $('si-problem').classList.remove('hidden');
      }
    };
  });
}

function showUser(): void {
  $('who').textContent = board.user ? `${board.user.displayName} (${board.user.role})` : '';
  $('signin-open').classList.toggle('hidden', !!board.user);
  $('signout').classList.toggle('hidden', !board.user);
}

$('signin-open').addEventListener('click', async () => {
  if (await askSignIn()) await loadAll();
});
$('signout').addEventListener('click', async () => {
  await signOut().catch(() => {});
  board.user = null;
  showUser();
});

// ------------------------------------------------------------------ live

/** A full alert (after an acknowledgement or resolution) or a check's summary of it: what is known is kept. */
function applyAlert(alert: Alert | AlertSummary): void {
  const v = board.lines.get(alert.lineId);
  if (!v) return;
  v.alerts.set(alert.id, { signals: [], acknowledged: null, resolved: null, shelved: null, told: [], ...v.alerts.get(alert.id), ...alert });
  if (v.status) v.status.openAlerts = [...v.alerts.values()].filter((a) => a.state !== 'resolved');
  refreshTile(v);
}

async function onMessage(m: LiveMessage): Promise<void> {
  const lineId = m.lineId;
  let v = board.lines.get(lineId);
  if (!v && lineId > 0) {
    await loadAll();
    return;
  }
  if (!v) return;
  if (m.type === 'check') {
    const check = m.check;
    if (m.signals.length > 0) v.signalled.add(check.id);
    v.points = [...v.points.filter((p) => p.checkId !== check.id), toPoint(check)].slice(-MAX_POINTS * 4);
    if (v.status && !v.status.stop) {
      v.status.lastCheckAt = check.takenAt;
      const minutes = v.status.product?.samplingMinutes ?? 60;
      v.status.nextCheckDue = new Date(Date.parse(check.takenAt) + minutes * 60_000).toISOString();
    }
    refreshTile(v);
  } else if (m.type === 'alert-opened' || m.type === 'alert-updated') {
    if (m.type === 'alert-opened' && board.sound) twoToneChime();
    applyAlert(m.alert);
  } else if (m.type === 'line-status') {
    v = await loadLine(v.line);
    board.lines.set(lineId, v);
    renderTiles();
  }
}

function showConnection(): void {
  const box = $('connection');
  // the state as data too: tests and monitoring wait on it rather than on a timer
  box.dataset.state = board.connected ? 'connected' : 'down';
  if (board.connected) {
    box.textContent = '';
    box.className = 'connection';
    return;
  }
  const ago = board.lastMessageAt === null ? 'never' : `${duration(Date.now() - board.lastMessageAt)} ago`;
  box.textContent = `reconnecting — last update ${ago}`;
  box.className = 'connection down';
}

// ------------------------------------------------------------------ controls and start

function applyTheme(theme: string): void {
  document.documentElement.dataset.theme = theme;
  $('theme').textContent = theme === 'dark' ? 'Light theme' : 'Dark theme';
}

$('theme').addEventListener('click', () => {
  const next = document.documentElement.dataset.theme === 'dark' ? 'light' : 'dark';
  localStorage.setItem('heft.board.theme', next);
  applyTheme(next);
  renderTiles();
});

$('sound').addEventListener('click', () => {
  board.sound = !board.sound;
  localStorage.setItem('heft.board.sound', board.sound ? 'on' : 'off');
  $('sound').textContent = board.sound ? 'Sound on' : 'Sound off';
  $('sound').setAttribute('aria-pressed', String(board.sound));
  if (board.sound) twoToneChime();
});

$('filter-line').addEventListener('change', renderTiles);
$('filter-state').addEventListener('change', () => {
  renderTiles();
  if (board.detailLine !== null) renderDetail();
});

window.addEventListener('resize', () => renderTiles());

async function start(): Promise<void> {
  applyTheme(localStorage.getItem('heft.board.theme') ?? (matchMedia('(prefers-color-scheme: dark)').matches ? 'dark' : 'light'));
  $('sound').textContent = board.sound ? 'Sound on' : 'Sound off';
  board.plant = await getPlant().catch(() => board.plant);
  $('plant').textContent = board.plant.name;
  const token = new URLSearchParams(location.search).get('token');
  if (token) {
    // a wall screen's link: trade the token for a cookie, then take it out of the address bar
    await api('POST', '/api/board-session', { token }).catch(() => problem('That board link is not valid (or was revoked). Ask the admin for a new one.'));
    history.replaceState(null, '', '/board');
  }
  board.user = await whoAmI().catch(() => null);
  showUser();
  try {
    await loadAll();
  } catch (err) {
    if (err instanceof ApiError && err.status === 401) {
      problem('Sign in, or open the board link the admin made for this screen.');
      if (await askSignIn()) {
        problem(null);
        await loadAll();
      } else return;
    } else {
      problem('The server cannot be reached.');
    }
  }
  board.live = new LiveClient({
    onMessage: (m) => void onMessage(m),
    onState: (s) => {
      const wasDown = !board.connected;
      board.connected = s.connected;
      board.lastMessageAt = s.lastMessageAt;
      showConnection();
      if (s.connected && wasDown) problem(null);
    },
    onResync: () => void loadAll(),
  });
  board.live.start();
  window.setInterval(() => {
    $('clock').textContent = clock(new Date().toISOString(), board.plant.timeZone);
    showConnection();
    for (const v of board.lines.values()) {
      const due = v.tile?.querySelector('[data-due]');
      if (due) {
        const d = dueWords(v.status?.nextCheckDue);
        due.textContent = d.text;
        due.className = `due${d.late ? ' late' : ''}`;
      }
    }
  }, 1000);
}

void start();
