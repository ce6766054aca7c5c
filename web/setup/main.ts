import '../shared/base.css';
import './setup.css';
import QRCode from 'qrcode';
import { api, ApiError, getPlant, signIn, whoAmI, type Line, type Plant, type Product, type User } from '../shared/api.js';
import { el, weight } from '../shared/format.js';
import type { ProductPreview } from '../../server/products/contract.js';
import type { TokenView, UserView } from '../../server/auth/contract.js';
import { setUpScales } from './scales.js';
import { renderLines } from './lines.js';
import { setUpLimits } from './limits.js';
import { usePlantZone, when } from './when.js';
import { refreshFalseAlarm, ruleChoice, setUpRuleChoice, showRuleChoice } from './rules.js';

const $ = <T extends HTMLElement>(id: string) => document.getElementById(id) as T;
const state: { user: User | null; plant: Plant; products: Product[]; lines: Line[]; editing: Product | null } = { user: null, plant: { name: 'Heft', timeZone: 'UTC' }, products: [], lines: [], editing: null };

function problem(text: string | null): void {
  $('problem').textContent = text ?? '';
  $('problem').classList.toggle('hidden', !text);
}

const messageOf = (err: unknown) => (err instanceof ApiError ? (err.body?.message ?? err.message) : 'The server cannot be reached.');

/** A refused save: each field's reason beside that field (ids `<prefix>-<field>-error`), the rest at the top. */
function showFieldErrors(prefix: string, err: unknown): void {
  for (const e of document.querySelectorAll<HTMLElement>(`[id^="${prefix}-"][id$="-error"]`)) e.textContent = '';
  const issues = err instanceof ApiError ? (err.body?.issues ?? []) : [];
  let placed = 0;
  for (const i of issues) {
    const slot = document.getElementById(`${prefix}-${i.field.split('.')[0]}-error`);
    if (slot) {
      slot.textContent = i.message;
      placed += 1;
    }
  }
  problem(placed === issues.length && placed > 0 ? null : messageOf(err));
}

// ------------------------------------------------------------------ sign-in and the role gate

async function start(): Promise<void> {
  const plant = await getPlant().catch(() => state.plant);
  state.plant = plant;
  usePlantZone(plant.timeZone);
  $('plant').textContent = plant.name;
  state.user = await whoAmI().catch(() => null);
  const user = state.user;
  if (!user || user.role === 'operator') {
    $('signin').classList.remove('hidden');
    $('sections').classList.add('hidden');
    if (user) problem(`${user.displayName} is signed in as ${user.role}. Plant set-up is for the quality manager and the plant admin (a supervisor may change a line over here): ask one of them to change products, lines, people or tokens.`);
    return;
  }
  problem(null);
  $('signin').classList.add('hidden');
  $('sections').classList.remove('hidden');
  $('who').textContent = `${user.displayName} (${user.role})`;
  // each section names the roles it is for; a supervisor sees Lines only, to change a line over
  for (const s of document.querySelectorAll<HTMLElement>('[data-roles]')) {
    const hidden = !(s.dataset.roles ?? '').split(' ').includes(user.role);
    s.classList.toggle('hidden', hidden);
    document.querySelector(`nav a[href="#${s.id}"]`)?.classList.toggle('hidden', hidden);
  }
  $('supervisor-note').classList.toggle('hidden', user.role !== 'supervisor');
  if (user.role === 'supervisor') return void (await loadProducts());
  await setUpRuleChoice();
  await loadProducts();
  await setUpScales(state.lines, user.role === 'admin');
  if (user.role === 'admin') await Promise.all([loadPeople(), loadTokens()]);
}

$<HTMLFormElement>('signin-form').addEventListener('submit', async (e) => {
  e.preventDefault();
  try {
    await signIn($<HTMLInputElement>('si-user').value.trim(), $<HTMLInputElement>('si-secret').value);
    await start();
  } catch (err) {
    problem(messageOf(err));
  }
});

// ------------------------------------------------------------------ products

const PRODUCT_FIELDS = ['code', 'name', 'nominal', 'unit', 'target', 'subgroupSize', 'samplingMinutes', 'tare', 'entryBasis', 'sigma', 'lsl', 'usl', 'costPerKg', 'windowSize'] as const;
const NUMBER_FIELDS = new Set(['nominal', 'target', 'subgroupSize', 'samplingMinutes', 'tare', 'sigma', 'lsl', 'usl', 'costPerKg', 'windowSize']);
const OPTIONAL_NULL = new Set(['sigma', 'lsl', 'usl', 'costPerKg']);
const field = (name: string) => $<HTMLInputElement | HTMLSelectElement>(`pf-${name}`);

async function loadProducts(): Promise<void> {
  const [products, lines] = await Promise.all([api<{ products: Product[] }>('GET', '/api/products'), api<{ lines: Line[] }>('GET', '/api/lines')]);
  state.products = products.products;
  state.lines = lines.lines;
  renderProducts();
  renderLines(state.lines, state.products, state.user?.role === 'admin', loadProducts, problem);
  if (state.user?.role !== 'supervisor') await setUpLimits(state.plant, state.lines);
}

/** Where a product runs now, and since when: "L1 since 3 Dec 06:00". */
function inUse(p: Product): string {
  return state.lines
    .filter((l) => l.product?.id === p.id)
    .map((l) => `${l.code} since ${when(l.runStartedAt, '?')}`)
    .join(', ');
}

function renderProducts(): void {
  const q = $<HTMLInputElement>('product-search').value.trim().toLowerCase();
  const shown = state.products.filter((p) => !q || p.code.toLowerCase().includes(q) || p.name.toLowerCase().includes(q));
  $('product-table').querySelector('tbody')?.replaceChildren(
    ...shown.map((p) => {
      const edit = el('button', { type: 'button' }, 'Edit');
      edit.addEventListener('click', () => openProduct(p));
      const row = el('tr', { 'data-code': p.code }, el('td', {}, p.code), el('td', {}, p.name), el('td', {}, weight(p.nominal, p.unit)), el('td', {}, weight(p.target, p.unit)), el('td', {}, String(p.subgroupSize)), el('td', {}, String(p.samplingMinutes)), el('td', {}, p.sigma === null ? '—' : weight(p.sigma, p.unit)), el('td', {}, inUse(p) || '—'), el('td', {}, edit));
      return row;
    }),
  );
}
$('product-search').addEventListener('input', renderProducts);

function openProduct(p: Product | null): void {
  state.editing = p;
  $('product-form-title').textContent = p ? `Edit ${p.code}` : 'New product';
  for (const name of PRODUCT_FIELDS) {
    const value = p ? (p as unknown as Record<string, unknown>)[name] : undefined;
    const input = field(name);
    const initial = input instanceof HTMLSelectElement ? (input.options[0]?.value ?? '') : input.defaultValue;
    input.value = value === null || value === undefined ? (p ? '' : initial) : String(value);
  }
  showRuleChoice(p?.rules ?? null);
  $('product-in-use').textContent = p && inUse(p) ? `In use on ${inUse(p)}.` : '';
  $('product-saved').textContent = '';
  showFieldErrors('pf', null);
  $('product-form').classList.remove('hidden');
  field('code').focus();
  void derive();
  void refreshFalseAlarm(productBody().subgroupSize, productBody().samplingMinutes);
}
$('new-product').addEventListener('click', () => openProduct(null));
$('product-cancel').addEventListener('click', () => $('product-form').classList.add('hidden'));

/** The form as the API takes it: numbers with either decimal mark, empty optional fields left out (or null when editing). */
function productBody(): Record<string, unknown> {
  const body: Record<string, unknown> = {};
  for (const name of PRODUCT_FIELDS) {
    const raw = field(name).value.trim();
    if (raw === '') {
      if (state.editing && OPTIONAL_NULL.has(name)) body[name] = null;
      continue;
    }
    body[name] = NUMBER_FIELDS.has(name) ? (Number.isNaN(Number(raw.replace(',', '.'))) ? raw : Number(raw.replace(',', '.'))) : raw;
  }
  body.rules = ruleChoice();
  return body;
}

let deriveTimer = 0;
/** What Heft derives from what is typed: TNE, T1, T2, σ of a check's mean and the lowest target advised. */
async function derive(): Promise<void> {
  const body = productBody();
  const box = $('derived');
  if (typeof body.nominal !== 'number') {
    box.replaceChildren();
    return;
  }
  try {
    const { preview } = await api<{ preview: ProductPreview }>('POST', '/api/products/preview', { nominal: body.nominal, unit: body.unit, subgroupSize: typeof body.subgroupSize === 'number' ? body.subgroupSize : undefined, sigma: typeof body.sigma === 'number' ? body.sigma : null });
    const unit = body.unit === 'kg' ? 'kg' : 'g';
    const fact = (k: string, v: number | null, words = '') => el('div', {}, el('dt', {}, k), el('dd', {}, v === null ? '—' : `${weight(v, unit)}${words}`));
    box.replaceChildren(fact('TNE', preview.tne), fact('T1', preview.t1), fact('T2', preview.t2), fact('σ of a check’s mean', preview.sigmaOfMean), fact('Lowest target advised', preview.lowestTarget, preview.lowestTarget === null ? '' : ' (for the σ given)'));
  } catch {
    box.replaceChildren();
  }
}
$('product-form').addEventListener('input', () => {
  window.clearTimeout(deriveTimer);
  deriveTimer = window.setTimeout(() => {
    void derive();
    const body = productBody();
    void refreshFalseAlarm(body.subgroupSize, body.samplingMinutes);
  }, 200);
});

$<HTMLFormElement>('product-form').addEventListener('submit', async (e) => {
  e.preventDefault();
  try {
    const { product } = state.editing
      ? await api<{ product: Product }>('PATCH', `/api/products/${state.editing.id}`, productBody())
      : await api<{ product: Product }>('POST', '/api/products', productBody());
    showFieldErrors('pf', null);
    state.editing = product;
    $('product-form-title').textContent = `Edit ${product.code}`;
    $('product-saved').textContent = `Saved ${product.code} (settings version ${product.version}).`;
    await loadProducts();
  } catch (err) {
    showFieldErrors('pf', err); // the form keeps what was typed
  }
});

// ------------------------------------------------------------------ products from a spreadsheet

let importText: string | null = null;
$<HTMLInputElement>('import-file').addEventListener('change', async () => {
  const file = $<HTMLInputElement>('import-file').files?.[0];
  importText = file ? await file.text() : null;
  $('import-errors').replaceChildren();
  $('import-result').textContent = '';
  $<HTMLButtonElement>('import-button').disabled = importText === null;
  const preview = $('import-preview');
  if (!importText) return preview.classList.add('hidden');
  // a first look only (the server reads the file properly): the first rows split at the header's separator
  const lines = importText.split(/\r?\n/).filter((l) => l.trim() !== '');
  const sep = (lines[0]?.split(';').length ?? 0) > (lines[0]?.split(',').length ?? 0) ? ';' : ',';
  preview.replaceChildren(...lines.slice(0, 6).map((l, i) => el('tr', {}, ...l.split(sep).map((c) => el(i === 0 ? 'th' : 'td', {}, c.replace(/^"|"$/g, ''))))));
  preview.classList.remove('hidden');
  $('import-result').textContent = `${lines.length - 1} product rows in the file${lines.length > 6 ? ' (the first five shown)' : ''}.`;
});

$<HTMLFormElement>('import-form').addEventListener('submit', async (e) => {
  e.preventDefault();
  if (importText === null) return;
  const mode = $<HTMLInputElement>('import-update').checked ? 'update' : 'create';
  const res = await fetch(`/api/products/import?mode=${mode}`, { method: 'POST', headers: { 'content-type': 'text/csv' }, body: importText, credentials: 'same-origin' });
  const answer = (await res.json().catch(() => null)) as { created?: string[]; updated?: string[]; errors?: { row: number; field: string; message: string }[]; message?: string } | null;
  if (res.status === 201 && answer) {
    $('import-errors').replaceChildren();
    $('import-result').textContent = `Imported: ${answer.created?.length ?? 0} new, ${answer.updated?.length ?? 0} changed.`;
    await loadProducts();
    return;
  }
  $('import-result').textContent = answer?.message ?? `The file was refused (HTTP ${res.status}).`;
  $('import-errors').replaceChildren(...(answer?.errors ?? []).map((x) => el('li', {}, `Row ${x.row}, ${x.field}: ${x.message}`)));
});

// ------------------------------------------------------------------ people


async function loadPeople(): Promise<void> {
  const { users } = await api<{ users: UserView[] }>('GET', '/api/users');
  $('people-table').querySelector('tbody')?.replaceChildren(
    ...users.map((u) => {
      const toggle = el('button', { type: 'button' }, u.disabled ? 'Enable' : 'Disable');
      toggle.addEventListener('click', () => void patchUser(u.id, { disabled: !u.disabled }));
      const reset = el('button', { type: 'button' }, 'Reset PIN or password');
      reset.addEventListener('click', () => resetSecret(u, reset));
      return el('tr', { 'data-username': u.username }, el('td', {}, u.username), el('td', {}, u.displayName), el('td', {}, u.role), el('td', {}, u.disabled ? 'disabled' : u.locked ? 'locked (wrong sign-ins)' : 'active'), el('td', {}, when(u.lastSignInAt, 'never')), el('td', {}, toggle, ' ', reset));
    }),
  );
}

async function patchUser(id: number, body: Record<string, unknown>): Promise<void> {
  try {
    await api('PATCH', `/api/users/${id}`, body);
    problem(null);
    await loadPeople();
  } catch (err) {
    problem(messageOf(err));
  }
}

/** The new secret typed twice in a small form under the row; never shown back. */
function resetSecret(u: UserView, after: HTMLElement): void {
  const one = el('input', { type: 'password', id: `reset-${u.id}`, autocomplete: 'new-password' });
  const two = el('input', { type: 'password', id: `reset-${u.id}-again`, autocomplete: 'new-password' });
  const save = el('button', { type: 'submit', class: 'primary' }, 'Save');
  const form = el('form', { class: 'reset' }, el('label', { for: one.id }, `New PIN or password for ${u.username}`), one, el('label', { for: two.id }, 'Type it again'), two, save);
  form.addEventListener('submit', (e) => {
    e.preventDefault();
    if (one.value !== two.value) return problem('The two entries differ: type the new secret twice the same.');
    void patchUser(u.id, { secret: one.value });
  });
  after.after(form);
  one.focus();
}

$<HTMLFormElement>('person-form').addEventListener('submit', async (e) => {
  e.preventDefault();
  const secret = $<HTMLInputElement>('pp-secret').value;
  if (secret !== $<HTMLInputElement>('pp-again').value) {
    $('pp-again-error').textContent = 'differs from the first: type it twice the same';
    return;
  }
  try {
    const body = { username: $<HTMLInputElement>('pp-username').value.trim(), displayName: $<HTMLInputElement>('pp-displayName').value.trim(), role: $<HTMLSelectElement>('pp-role').value, secret };
    await api('POST', '/api/users', body);
    showFieldErrors('pp', null);
    $('person-saved').textContent = `Added ${body.username} (${body.role}).`;
    for (const id of ['pp-username', 'pp-displayName', 'pp-secret', 'pp-again']) $<HTMLInputElement>(id).value = '';
    await loadPeople();
  } catch (err) {
    showFieldErrors('pp', err);
  }
});

// ------------------------------------------------------------------ machine tokens

async function loadTokens(): Promise<void> {
  const { tokens } = await api<{ tokens: TokenView[] }>('GET', '/api/tokens');
  const lineCode = (id: number) => state.lines.find((l) => l.id === id)?.code ?? String(id);
  $('token-table').querySelector('tbody')?.replaceChildren(
    ...tokens.map((t) => {
      const revoke = el('button', { type: 'button' }, 'Revoke');
      revoke.addEventListener('click', async () => {
        await api('DELETE', `/api/tokens/${t.id}`).catch((err) => problem(messageOf(err)));
        await loadTokens();
      });
      return el('tr', { 'data-token': t.name }, el('td', {}, t.name), el('td', {}, t.kind), el('td', {}, t.lineIds.map(lineCode).join(', ') || '—'), el('td', {}, `${when(t.createdAt)} by ${t.createdBy}`), el('td', {}, t.revokedAt ? 'revoked' : 'active'), el('td', {}, when(t.lastUsedAt, 'not yet used')), el('td', {}, t.revokedAt ? '' : revoke));
    }),
  );
  $('tk-lines').replaceChildren(el('legend', {}, 'Lines it may post checks to'), ...state.lines.map((l) => el('label', {}, el('input', { type: 'checkbox', value: String(l.id) }), ` ${l.code}`)));
}

$<HTMLFormElement>('token-form').addEventListener('submit', async (e) => {
  e.preventDefault();
  const kind = $<HTMLSelectElement>('tk-kind').value;
  const lineIds = [...$('tk-lines').querySelectorAll<HTMLInputElement>('input:checked')].map((i) => Number(i.value));
  try {
    const { token } = await api<{ token: TokenView & { secret: string } }>('POST', '/api/tokens', { name: $<HTMLInputElement>('tk-name').value.trim(), kind, lineIds: kind === 'checks' ? lineIds : [] });
    showFieldErrors('tk', null);
    $<HTMLInputElement>('token-secret').value = token.secret;
    const link = `${location.origin}/board?token=${encodeURIComponent(token.secret)}`;
    $('token-link-row').classList.toggle('hidden', kind !== 'board');
    $('token-qr').classList.toggle('hidden', kind !== 'board');
    if (kind === 'board') {
      $<HTMLAnchorElement>('token-link').href = link;
      $('token-link').textContent = link;
      $<HTMLImageElement>('token-qr').src = await QRCode.toDataURL(link, { margin: 2, width: 240 });
    }
    $('token-made').classList.remove('hidden');
    await loadTokens();
  } catch (err) {
    showFieldErrors('tk', err);
  }
});
$('token-copy').addEventListener('click', () => void navigator.clipboard?.writeText($<HTMLInputElement>('token-secret').value));

void start().catch((err) => problem(messageOf(err)));
