import type { AlertSummary, AlertView, CheckSignalView, CheckView } from '../monitor/views.js';

/**
 * A live message before it is numbered. A check's message carries the check and its own signals, and
 * the alerts it touched as summaries; an acknowledgement or resolution carries the alert in full.
 */
export type LiveEventBody =
  | { type: 'check'; lineId: number; check: CheckView; signals: CheckSignalView[] }
  | { type: 'alert-opened' | 'alert-updated'; lineId: number; alert: AlertSummary | AlertView }
  | { type: 'line-status'; lineId: number; reason: string };

/** A live message as stored and sent: numbered by seq, stamped with its time. */
export type LiveEvent = LiveEventBody & { seq: number; at: string };
