/**
 * The SMTP connection: nodemailer to SMTP_HOST:SMTP_PORT, from MAIL_FROM. Implicit TLS on port
 * 465, otherwise STARTTLS when the server offers it. Timeouts are short so a server that is
 * down fails the attempt quickly and the outbox tries again later.
 */
import nodemailer, { type Transporter } from "nodemailer";
import { config } from "../config.server";

let transporter: Transporter | null = null;

function transport(): Transporter {
  transporter ??= nodemailer.createTransport({
    host: config.SMTP_HOST,
    port: config.SMTP_PORT,
    secure: config.SMTP_PORT === 465,
    connectionTimeout: 10_000,
    greetingTimeout: 10_000,
    socketTimeout: 30_000,
  });
  return transporter;
}

export interface OutgoingMail {
  to: string;
  subject: string;
  text: string;
  html: string;
}

/** Hands one message to the SMTP server; throws with the server's or the network's reason. */
export async function sendMail(m: OutgoingMail): Promise<void> {
  await transport().sendMail({
    from: config.MAIL_FROM,
    to: m.to,
    subject: m.subject,
    text: m.text,
    html: m.html,
  });
}
