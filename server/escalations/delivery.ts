import nodemailer from 'nodemailer';

/** The outcome of one attempt: sent, worth trying again later, refused for good, or gone (the receiver wants no more). */
export type Attempt = { ok: true } | { ok: false; retry: boolean; gone?: boolean; error: string };

export interface Mail {
  to: string;
  subject: string;
  text: string;
  html: string;
}

/** The two ways out of Heft; tests may put their own in. */
export interface Deliverers {
  email(mail: Mail): Promise<Attempt>;
  webhook(url: string, headers: Record<string, string>, body: string): Promise<Attempt>;
}

/** E-mail over SMTP (nodemailer) and webhooks over HTTP (fetch), each attempt bounded by `timeoutMs`. */
export function networkDeliverers(options: { smtpUrl: string | undefined; mailFrom: string; timeoutMs: number }): Deliverers {
  const transport = options.smtpUrl
    ? nodemailer.createTransport({ url: options.smtpUrl, connectionTimeout: options.timeoutMs, greetingTimeout: options.timeoutMs, socketTimeout: options.timeoutMs } as Parameters<typeof nodemailer.createTransport>[0])
    : null;
  return {
    async email(mail) {
      if (!transport) return { ok: false, retry: false, error: 'no SMTP server is configured (--smtp-url)' };
      try {
        await transport.sendMail({ from: options.mailFrom, ...mail });
        return { ok: true };
      } catch (err) {
        const e = err as { responseCode?: number; message?: string };
        // an SMTP 5xx is a refusal for good; 4xx and network errors pass
        return { ok: false, retry: !(e.responseCode !== undefined && e.responseCode >= 500), error: e.message ?? String(err) };
      }
    },
    async webhook(url, headers, body) {
      try {
        const res = await fetch(url, { method: 'POST', headers: { 'content-type': 'application/json', ...headers }, body, signal: AbortSignal.timeout(options.timeoutMs), redirect: 'error' });
        await res.arrayBuffer().catch(() => undefined);
        if (res.ok) return { ok: true };
        if (res.status === 410) return { ok: false, retry: false, gone: true, error: 'HTTP 410 Gone' };
        return { ok: false, retry: res.status >= 500 || res.status === 429 || res.status === 408, error: `HTTP ${res.status}` };
      } catch (err) {
        // fetch hides the network's own reason (ECONNREFUSED, a timeout) in `cause`
        const cause = (err as { cause?: { code?: string; message?: string } }).cause;
        const reason = cause?.code ?? cause?.message;
        return { ok: false, retry: true, error: err instanceof Error ? `${err.message}${reason ? ` (${reason})` : ''}` : String(err) };
      }
    },
  };
}
