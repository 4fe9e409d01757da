import { Form } from "react-router";
import { utc } from "~/shared/format";
import { ReauthNotice, SigningExplainer } from "../signing";
import { StatusLabel } from "../status";

/** Whether this person may sign now (null: not a signer), and if not, why. */
export type SignVerdict = { ok: true } | { ok: false; reason: string; reauthenticate?: boolean };

/** The rerun's signatures, or the form to sign it, or what it still waits for. */
export function SignOff({
  signatures,
  verdict,
  signing,
  open,
  busy,
}: {
  signatures: readonly { name: string; meaning: string; at: string }[];
  verdict: SignVerdict | null;
  signing: { meaning: string; notice: { tone: "within" | "finding"; message: string } | null };
  open: number;
  busy: boolean;
}) {
  return (
    <section id="sign-off" className="mt-8 panel p-4" aria-labelledby="sign-h">
      <h2 id="sign-h" className="mb-2">
        Sign-off
      </h2>
      {signatures.length === 0 && !verdict?.ok && !verdict?.reauthenticate ? (
        <ReauthNotice notice={signing.notice} />
      ) : null}
      {signatures.length > 0 ? (
        signatures.map((s) => (
          <p key={s.at} className="text-sm">
            <StatusLabel status="within" word="Signed" /> {s.name} · “{s.meaning}” · {utc(s.at)}. Published to
            the study's sponsor readers.
          </p>
        ))
      ) : verdict ? (
        verdict.ok || verdict.reauthenticate ? (
          <Form method="post" className="space-y-2">
            <input type="hidden" name="intent" value="sign" />
            <ReauthNotice notice={signing.notice} />
            <SigningExplainer act="Signing" meaning={signing.meaning} fresh={verdict.ok} />
            <p className="text-sm">
              Signing makes this rerun unchangeable and publishes it to the sponsor readers.
            </p>
            <button type="submit" className="btn" disabled={busy}>
              Sign this rerun
            </button>
          </Form>
        ) : (
          <p className="text-sm">{verdict.reason}</p>
        )
      ) : (
        <p className="text-sm text-ink-soft">
          {open > 0 ? `${open} findings await assessment.` : "Awaiting a biostatistician's signature."}
        </p>
      )}
    </section>
  );
}
