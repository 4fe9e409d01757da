import type { Route } from "./+types/admin.outbox";
import { utc } from "~/shared/format";
import { EmptyState, PageHeader } from "~/components/page";
import { StatusLabel, type Status } from "~/components/status";
import { fakeInbox } from "~/.server/mail/fake-inbox.server";
import {
  listOutbox,
  MAIL_KINDS,
  MAX_MAIL_ATTEMPTS,
  outboxCounts,
  type MailKind,
} from "~/.server/mail/outbox.server";
import { requireAdmin } from "~/.server/permissions.server";

export function meta() {
  return [{ title: "E-mail outbox · Plumbline" }];
}

export async function loader({ request }: Route.LoaderArgs) {
  await requireAdmin(request, "outbox.read");
  const [messages, counts, inbox] = await Promise.all([listOutbox(200), outboxCounts(), fakeInbox(100)]);
  return {
    counts,
    maxAttempts: MAX_MAIL_ATTEMPTS,
    messages: messages.map((m) => ({
      id: m.id,
      createdAt: m.createdAt,
      studyCode: m.studyCode,
      kind: m.kind && m.kind in MAIL_KINDS ? MAIL_KINDS[m.kind as MailKind] : (m.kind ?? "—"),
      recipient: m.recipient,
      subject: m.subject,
      status: m.status,
      attempts: m.attempts,
      lastAttemptAt: m.lastAttemptAt,
      nextAttemptAt: m.status === "queued" && m.attempts > 0 ? m.nextAttemptAt : null,
      sentAt: m.sentAt,
      lastError: m.lastError,
      text: m.textBody,
    })),
    inbox,
  };
}

const LOOK: Record<"queued" | "sent" | "failed", { status: Status; word: string }> = {
  queued: { status: "pending", word: "Queued" },
  sent: { status: "within", word: "Sent" },
  failed: { status: "finding", word: "Failed" },
};

export default function Outbox({ loaderData }: Route.ComponentProps) {
  const { counts, messages, inbox, maxAttempts } = loaderData;
  return (
    <main>
      <PageHeader eyebrow="Administration" title="E-mail outbox" />
      <p className="mb-4 max-w-prose text-sm text-ink-soft">
        Notifications are queued here with the event they announce and sent in the background. When the mail
        server cannot take a message it stays queued and is tried again, waiting longer each time; after{" "}
        {maxAttempts} tries it is marked failed with the server&apos;s reason. Messages carry study-level
        facts and a link only, never subject-level data.
      </p>
      <p className="num mb-4 text-sm">
        {counts.queued} queued · {counts.sent} sent · {counts.failed} failed
      </p>
      {messages.length === 0 ? (
        <EmptyState title="No messages yet">
          <p>
            A message is queued when a plan version is submitted for approval, a rerun awaits sign-off, a
            report is published or an appendix is exported.
          </p>
        </EmptyState>
      ) : (
        <div className="mb-8 overflow-x-auto">
          <table className="data-table panel" aria-label="Outbox messages">
            <thead>
              <tr>
                <th scope="col">Queued (UTC)</th>
                <th scope="col">Study</th>
                <th scope="col">Notification</th>
                <th scope="col">Recipient</th>
                <th scope="col">Subject and text</th>
                <th scope="col">Status</th>
                <th scope="col" className="text-right">
                  Tries
                </th>
                <th scope="col">Last try · next try</th>
                <th scope="col">Last error</th>
              </tr>
            </thead>
            <tbody>
              {messages.map((m) => (
                <tr key={m.id}>
                  <td className="num whitespace-nowrap">{utc(m.createdAt)}</td>
                  <td>{m.studyCode ?? "—"}</td>
                  <td className="text-xs">{m.kind}</td>
                  <td className="break-all text-xs">{m.recipient}</td>
                  <td className="max-w-md text-xs">
                    <details>
                      <summary className="cursor-pointer">{m.subject}</summary>
                      <pre className="mt-2 whitespace-pre-wrap break-words font-mono text-xs">{m.text}</pre>
                    </details>
                  </td>
                  <td>
                    <StatusLabel status={LOOK[m.status].status} word={LOOK[m.status].word} />
                  </td>
                  <td className="num text-right">{m.attempts}</td>
                  <td className="num whitespace-nowrap text-xs">
                    {m.status === "sent" ? `sent ${utc(m.sentAt)}` : utc(m.lastAttemptAt)}
                    {m.nextAttemptAt ? (
                      <span className="block text-ink-soft">next {utc(m.nextAttemptAt)}</span>
                    ) : null}
                  </td>
                  <td className="max-w-xs break-words text-xs">{m.lastError ?? ""}</td>
                </tr>
              ))}
            </tbody>
          </table>
        </div>
      )}
      {inbox ? (
        <section aria-labelledby="fake-inbox">
          <h2 id="fake-inbox" className="mb-2">
            Received by the local SMTP fake
          </h2>
          <p className="mb-3 max-w-prose text-sm text-ink-soft">
            This installation sends to the local stand-in mail server of the demo and the tests; these are the
            messages it received, newest first.
          </p>
          {inbox.messages.length === 0 ? (
            <p className="text-sm">Nothing received yet.</p>
          ) : (
            <div className="overflow-x-auto">
              <table className="data-table panel" aria-label="Messages received by the SMTP fake">
                <thead>
                  <tr>
                    <th scope="col">Received (UTC)</th>
                    <th scope="col">To</th>
                    <th scope="col">Subject and text</th>
                  </tr>
                </thead>
                <tbody>
                  {inbox.messages.map((m) => (
                    <tr key={m.id}>
                      <td className="num whitespace-nowrap">{utc(m.receivedAt)}</td>
                      <td className="break-all text-xs">{m.envelopeTo.join(", ")}</td>
                      <td className="max-w-2xl text-xs">
                        <details>
                          <summary className="cursor-pointer">{m.subject}</summary>
                          <pre className="mt-2 whitespace-pre-wrap break-words font-mono text-xs">
                            {m.text}
                          </pre>
                        </details>
                      </td>
                    </tr>
                  ))}
                </tbody>
              </table>
            </div>
          )}
        </section>
      ) : null}
    </main>
  );
}
