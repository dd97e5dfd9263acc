/**
 * The SMTP edge: the server URL, one connection at a time, one message per
 * transaction, with a hook just before the end-of-data marker so the ledger
 * can record the point of no return (see ledger.ts).
 *
 * Security rules, each enforced here:
 * - the URL carries no credentials (refused, without echoing the URL);
 *   user and password come from the caller, who reads them from the
 *   environment;
 * - STARTTLS is used whenever the server offers it (nodemailer's default),
 *   and a failed upgrade is an error, never a fallback to plain text;
 * - with credentials, a server that is not on this machine must offer TLS,
 *   else the password is not sent (`requireTLS`);
 * - certificates are verified; a self-signed one is accepted only when the
 *   caller asks for it explicitly and the server is a loopback address;
 * - every text that may be shown or stored (replies, errors) goes through
 *   `redact`, which removes the password in every form the protocol sends.
 */
import net from 'node:net';
import { Readable } from 'node:stream';
import SMTPConnection from 'nodemailer/lib/smtp-connection';
import { UsageError } from '../errors.ts';
import { singleLine } from './compose.ts';

export interface SmtpEndpoint {
  readonly secure: boolean;
  readonly host: string;
  readonly port: number;
  /** 127.0.0.0/8, ::1 or localhost: this machine. */
  readonly loopback: boolean;
  /** `smtp://host:port`, safe to print. */
  readonly display: string;
}

const DEFAULT_PORTS = { 'smtp:': 587, 'smtps:': 465 } as const;

/** True for the loopback range 127.0.0.0/8, ::1 and the name localhost. */
export function isLoopbackHost(host: string): boolean {
  const bare = host.replace(/^\[|\]$/g, '').toLowerCase();
  if (bare === 'localhost' || bare === '::1' || bare === '0:0:0:0:0:0:0:1') return true;
  return net.isIPv4(bare) && bare.startsWith('127.');
}

/**
 * Parses `--smtp`: `smtp://HOST[:PORT]` (STARTTLS when offered, port 587 by
 * default) or `smtps://HOST[:PORT]` (TLS from the start, port 465). Refuses
 * user information, a path, a query or a fragment; the messages never repeat
 * the URL, which may hold a password.
 */
export function parseSmtpUrl(text: string): SmtpEndpoint {
  let url: URL;
  try {
    url = new URL(text.trim());
  } catch {
    throw new UsageError('--smtp is not a URL; expected smtp://HOST[:PORT] or smtps://HOST[:PORT] (the value is not repeated here, as it may hold a password)');
  }
  if (url.protocol !== 'smtp:' && url.protocol !== 'smtps:') {
    throw new UsageError(`--smtp has the scheme "${url.protocol.replace(/:$/, '').slice(0, 20)}", expected smtp:// (STARTTLS when offered) or smtps:// (TLS from the start)`);
  }
  if (url.username !== '' || url.password !== '' || /^[a-z]+:\/\/[^/?#]*@/i.test(text.trim())) {
    throw new UsageError('--smtp must not hold a user name or password (found user information before the host); remove it from the URL and set QUARTERLINE_SMTP_USER and QUARTERLINE_SMTP_PASSWORD in the environment instead');
  }
  if ((url.pathname !== '' && url.pathname !== '/') || url.search !== '' || url.hash !== '') {
    throw new UsageError('--smtp takes only a scheme, a host and a port, e.g. smtp://mail.example.org:587; remove the path, query or fragment');
  }
  const host = url.hostname.replace(/^\[|\]$/g, '');
  if (host === '') throw new UsageError('--smtp has no host; expected smtp://HOST[:PORT] or smtps://HOST[:PORT]');
  const port = url.port === '' ? DEFAULT_PORTS[url.protocol] : Number(url.port);
  const secure = url.protocol === 'smtps:';
  const shownHost = net.isIPv6(host) ? `[${host}]` : host;
  return { secure, host, port, loopback: isLoopbackHost(host), display: `${url.protocol}//${shownHost}:${port}` };
}

export interface SmtpCredentials {
  readonly user: string;
  readonly password: string;
}

export interface SmtpTlsOptions {
  /** Accept a self-signed certificate, for a test server on this machine only (refused for any other host). */
  readonly allowSelfSignedOnLoopback?: boolean;
  /** Extra trusted CA certificates (PEM), e.g. a firm's own relay. */
  readonly ca?: string | Uint8Array;
}

export interface SmtpSessionOptions {
  readonly endpoint: SmtpEndpoint;
  readonly credentials: SmtpCredentials | null;
  readonly tls: SmtpTlsOptions;
  /** Connection and greeting time-out, milliseconds. */
  readonly timeoutMs?: number;
}

/** Every form in which the password crosses the wire (AUTH PLAIN and LOGIN are base64). */
export function secretsOf(credentials: SmtpCredentials | null): readonly string[] {
  if (!credentials || credentials.password === '') return [];
  const base64 = (text: string): string => Buffer.from(text, 'utf8').toString('base64');
  return [
    credentials.password,
    base64(credentials.password),
    base64(`\u0000${credentials.user}\u0000${credentials.password}`),
    base64(`${credentials.user}\u0000${credentials.user}\u0000${credentials.password}`),
    encodeURIComponent(credentials.password),
  ].filter((secret) => secret.length > 0).sort((a, b) => b.length - a.length);
}

/** Text safe to print or store: one line, without any of `secrets`. */
export function redact(text: string, secrets: readonly string[]): string {
  let clean = text;
  for (const secret of secrets) clean = clean.split(secret).join('[password removed]');
  return singleLine(clean);
}

/** How a failed SMTP step is to be treated. */
export type FailureKind =
  /** 4xx, or a connection lost before the end of data: the message was not taken; try again later. */
  | 'temporary'
  /** 5xx for this message (a refused recipient, a refused message). */
  | 'permanent'
  /** The connection was lost after the end-of-data marker, before a reply: the server may have taken it. */
  | 'ambiguous'
  /** Nothing else can be sent in this run: credentials or TLS refused, the sender refused. */
  | 'fatal';

export interface SmtpFailure {
  readonly kind: FailureKind;
  /** The server's reply when there was one. */
  readonly reply: string | null;
  /** What happened, in words (redacted). */
  readonly reason: string;
}

export type TransactionOutcome =
  | { readonly delivered: true; readonly reply: string }
  | { readonly delivered: false; readonly failure: SmtpFailure };

interface NodemailerError extends Error {
  code?: string;
  /** The system or TLS error code under nodemailer's own (e.g. CERT_HAS_EXPIRED under ESOCKET). */
  originalCode?: string;
  responseCode?: number;
  response?: string;
  command?: string;
}

/** Node's codes for a certificate that cannot be verified and for a failed TLS handshake: retrying cannot help. */
const TLS_ERROR_CODES = /^(?:CERT_|DEPTH_ZERO_SELF_SIGNED_CERT|SELF_SIGNED_CERT_IN_CHAIN|UNABLE_TO_|HOSTNAME_MISMATCH|ERR_TLS_|ERR_SSL_)/;

/** Sorts an error of the connection into a FailureKind; `afterEndOfData` says whether the end-of-data marker may have gone out. */
export function classifyFailure(error: NodemailerError, afterEndOfData: boolean, secrets: readonly string[]): SmtpFailure {
  const reply = error.response ? redact(error.response, secrets) : null;
  const code = error.responseCode;
  const reason = redact(error.message, secrets);
  if (error.code === 'EAUTH') return { kind: 'fatal', reply, reason: `the server refused the login: ${reason}` };
  if (error.code === 'ETLS' || TLS_ERROR_CODES.test(error.originalCode ?? '')) {
    return { kind: 'fatal', reply, reason: `TLS failed: ${reason}${error.originalCode ? ` (${error.originalCode})` : ''}` };
  }
  if (code !== undefined && code >= 500 && error.command === 'MAIL FROM') {
    return { kind: 'fatal', reply, reason: `the server refused the sender: ${reason}` };
  }
  if (code !== undefined && code >= 500) return { kind: 'permanent', reply, reason };
  if (code !== undefined && code >= 400) return { kind: 'temporary', reply, reason };
  if (afterEndOfData) {
    return { kind: 'ambiguous', reply, reason: `the connection ended after the message was complete, before the server replied (${reason})` };
  }
  return { kind: 'temporary', reply, reason };
}

/** One connection to the server, open until `close` or an error. */
export interface SmtpSession {
  /** False once the connection has failed or been closed. */
  readonly usable: () => boolean;
  /** Whether the connection is encrypted (TLS from the start, or after STARTTLS). */
  readonly encrypted: () => boolean;
  /**
   * One SMTP transaction. `beforeEndOfData` runs after the whole message has
   * been handed to the connection and before the end-of-data marker is
   * released; if it throws, the marker is never sent, the connection is
   * dropped and the error is rethrown.
   */
  transact(envelope: { readonly from: string; readonly to: string }, message: Uint8Array, beforeEndOfData: () => Promise<void>): Promise<TransactionOutcome>;
  close(): void;
}

function connectionOptions(options: SmtpSessionOptions): ConstructorParameters<typeof SMTPConnection>[0] {
  const { endpoint, tls } = options;
  if (tls.allowSelfSignedOnLoopback && !endpoint.loopback) {
    throw new UsageError(`a self-signed certificate is accepted only from a test server on this machine (127.0.0.1, ::1, localhost), not from ${endpoint.display}; give the server's CA certificate instead`);
  }
  const timeout = options.timeoutMs ?? 60_000;
  return {
    host: endpoint.host,
    port: endpoint.port,
    secure: endpoint.secure,
    // The password never goes over an unencrypted connection to another machine.
    requireTLS: options.credentials !== null && !endpoint.secure && !endpoint.loopback,
    connectionTimeout: timeout,
    greetingTimeout: timeout,
    logger: false,
    debug: false,
    transactionLog: false,
    tls: {
      minVersion: 'TLSv1.2',
      ...(endpoint.loopback && tls.allowSelfSignedOnLoopback ? { rejectUnauthorized: false } : {}),
      ...(tls.ca !== undefined ? { ca: typeof tls.ca === 'string' ? tls.ca : Buffer.from(tls.ca) } : {}),
      ...(net.isIP(endpoint.host) ? {} : { servername: endpoint.host }),
    },
  };
}

/** Opens a connection, upgrades it with STARTTLS when offered, logs in when credentials are given. */
export async function openSession(options: SmtpSessionOptions): Promise<SmtpSession> {
  const secrets = secretsOf(options.credentials);
  const connection = new SMTPConnection(connectionOptions(options));
  let usable = true;
  // An 'error' event without a listener would end the process; the send or
  // connect callback gets the same error, so the listener only marks the state.
  connection.on('error', () => { usable = false; });
  connection.on('end', () => { usable = false; });

  const fail = (error: unknown, afterEndOfData = false): SmtpFailure => classifyFailure(error as NodemailerError, afterEndOfData, secrets);
  try {
    await new Promise<void>((resolve, reject) => {
      connection.once('error', reject);
      connection.connect((error) => {
        connection.removeListener('error', reject);
        if (error) reject(error);
        else resolve();
      });
    });
    if (options.credentials) {
      const { user, password } = options.credentials;
      await new Promise<void>((resolve, reject) => {
        connection.login({ user, pass: password }, (error) => (error ? reject(error) : resolve()));
      });
    }
  } catch (error) {
    connection.close();
    throw new SmtpConnectError(fail(error));
  }

  return {
    usable: () => usable,
    encrypted: () => connection.secure,
    async transact(envelope, message, beforeEndOfData) {
      let endOfDataReleased = false;
      let hookError: unknown = null;
      const body = messageStream(message, async () => {
        try {
          await beforeEndOfData();
          endOfDataReleased = true;
        } catch (error) {
          hookError = error;
          throw error;
        }
      });
      const result = await new Promise<{ error: NodemailerError | null; response: string | null }>((resolve) => {
        connection.send({ from: envelope.from, to: [envelope.to] }, body, (error, info) => {
          resolve({ error: (error as NodemailerError | null) ?? null, response: info?.response ?? null });
        });
      });
      if (hookError !== null) {
        usable = false;
        connection.close();
        throw hookError;
      }
      if (result.error) {
        usable = false;
        connection.close();
        return { delivered: false, failure: fail(result.error, endOfDataReleased) };
      }
      return { delivered: true, reply: redact(result.response ?? '', secrets) };
    },
    close() {
      if (usable) {
        usable = false;
        connection.quit();
      } else {
        connection.close();
      }
    },
  };
}

/** Connecting or logging in failed; carries the classified failure. */
export class SmtpConnectError extends Error {
  constructor(readonly failure: SmtpFailure) {
    super(failure.reason);
    this.name = 'SmtpConnectError';
  }
}

/**
 * The message as a stream that hands over all its bytes, then waits for
 * `beforeEnd` before it ends. nodemailer writes the end-of-data marker only
 * when this stream ends, and starts reading it only after the server's 354
 * reply to DATA.
 */
function messageStream(message: Uint8Array, beforeEnd: () => Promise<void>): Readable {
  let stage: 'body' | 'waiting' | 'ended' = 'body';
  return new Readable({
    read() {
      if (stage === 'body') {
        stage = 'waiting';
        this.push(Buffer.from(message));
        return;
      }
      if (stage === 'waiting') {
        stage = 'ended';
        beforeEnd().then(() => this.push(null), (error: unknown) => this.destroy(error instanceof Error ? error : new Error(String(error))));
      }
    },
  });
}
