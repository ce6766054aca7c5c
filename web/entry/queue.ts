import { createStore, del, entries, set } from 'idb-keyval';

/**
 * Checks waiting to reach the server, kept in IndexedDB so a dropped Wi-Fi or a closed tab loses
 * none. Each is keyed by its clientId: resending is safe because the server stores a clientId once.
 */
export interface QueuedCheck {
  clientId: string;
  lineId: number;
  /** A correction of an earlier check, or a new check. */
  correctsCheckId: number | null;
  body: Record<string, unknown>;
  queuedAt: number;
}

const store = createStore('heft-entry', 'queue');

export async function enqueue(item: QueuedCheck): Promise<void> {
  await set(item.clientId, item, store);
}

export async function remove(clientId: string): Promise<void> {
  await del(clientId, store);
}

/** Everything waiting, oldest first. */
export async function waiting(): Promise<QueuedCheck[]> {
  const all = (await entries<string, QueuedCheck>(store)).map(([, v]) => v);
  return all.sort((a, b) => a.queuedAt - b.queuedAt);
}
