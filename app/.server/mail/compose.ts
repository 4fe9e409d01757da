/**
 * The shape of every notification: a heading, a few sentences, a short list of facts, one link
 * back to the page and the caution, as plain text and as simple print-like HTML (inline styles,
 * the Noto Sans family by name with a generic fallback, no remote images or fonts). Pure: the
 * callers decide the words; nothing here reads the database.
 *
 * What goes in is study-level only (codes, titles, versions, counts, names of staff); callers
 * never pass subject identifiers or data rows.
 */
import { CAUTION } from "~/shared/caution";

export interface MessageContent {
  subject: string;
  heading: string;
  paragraphs: string[];
  facts: [label: string, value: string][];
  link: { url: string; label: string };
  /** Why this person gets the message, e.g. "You receive this as a biostatistician on QMT-301." */
  reason: string;
}

export interface ComposedMessage {
  subject: string;
  text: string;
  html: string;
}

const escapeHtml = (s: string): string =>
  s
    .replace(/&/g, "&amp;")
    .replace(/</g, "&lt;")
    .replace(/>/g, "&gt;")
    .replace(/"/g, "&quot;")
    .replace(/'/g, "&#39;");

/** Subject lines are one line: no line breaks from titles. */
const oneLine = (s: string): string => s.replace(/\s+/g, " ").trim();

function textBody(c: MessageContent): string {
  const width = Math.max(...c.facts.map(([label]) => label.length), 0);
  return [
    c.heading,
    "",
    ...c.paragraphs.flatMap((p) => [p, ""]),
    ...c.facts.map(([label, value]) => `${`${label}:`.padEnd(width + 2)}${value}`),
    "",
    `${c.link.label}: ${c.link.url}`,
    "",
    `Caution. ${CAUTION}`,
    "",
    "-- ",
    c.reason,
    "Plumbline sends this automatically; replies are not read.",
    "",
  ].join("\n");
}

const INK = "#1d2433";
const SOFT = "#5b6478";
const RULE = "#d9d4c7";
const BRASS = "#9a6b1f";
const FONT = "'Noto Sans', Arial, Helvetica, sans-serif";

function htmlBody(c: MessageContent): string {
  const e = escapeHtml;
  const facts = c.facts
    .map(
      ([label, value]) =>
        `<tr><th scope="row" style="text-align:left;font-weight:600;padding:4px 16px 4px 0;vertical-align:top;white-space:nowrap">${e(label)}</th>` +
        `<td style="padding:4px 0;font-variant-numeric:tabular-nums">${e(value)}</td></tr>`,
    )
    .join("");
  return `<!doctype html>
<html lang="en">
<head><meta charset="utf-8"><meta name="viewport" content="width=device-width"><title>${e(oneLine(c.subject))}</title></head>
<body style="margin:0;padding:24px;background:#ffffff;color:${INK};font-family:${FONT};font-size:14px;line-height:1.5">
<div style="max-width:640px">
<p style="margin:0 0 16px;font-size:12px;font-weight:600;letter-spacing:0.04em;text-transform:uppercase;color:${SOFT}">Plumbline</p>
<h1 style="margin:0 0 16px;font-size:20px;font-weight:600">${e(c.heading)}</h1>
${c.paragraphs.map((p) => `<p style="margin:0 0 12px">${e(p)}</p>`).join("\n")}
<table style="border-collapse:collapse;border-top:1px solid ${RULE};border-bottom:1px solid ${RULE};margin:16px 0;font-size:14px">${facts}</table>
<p style="margin:0 0 24px"><a href="${e(c.link.url)}" style="color:${BRASS};font-weight:600">${e(c.link.label)}</a><br><span style="font-size:12px;color:${SOFT}">${e(c.link.url)}</span></p>
<p style="margin:0 0 24px;font-size:12px"><strong>Caution.</strong> ${e(CAUTION)}</p>
<p style="margin:0;padding-top:8px;border-top:1px solid ${RULE};font-size:12px;color:${SOFT}">${e(c.reason)} Plumbline sends this automatically; replies are not read.</p>
</div>
</body>
</html>
`;
}

export function composeMessage(c: MessageContent): ComposedMessage {
  return { subject: oneLine(c.subject), text: textBody(c), html: htmlBody(c) };
}
