/**
 * What a signing form says before an electronic signature (rerun sign-off, plan approval,
 * dataset lock): what the signature records and means, and, when the sign-in is not fresh,
 * why the signer is sent to the sign-in service first. Plus the notice shown on return.
 */
export function SigningExplainer({ act, meaning, fresh }: { act: string; meaning: string; fresh: boolean }) {
  return (
    <p className="mb-2 max-w-prose text-sm" data-testid="signing-explainer">
      {act} is your electronic signature: Plumbline records your name, the time and the meaning{" "}
      <span className="font-semibold">“{meaning}”</span>, and shows them here.
      {fresh
        ? " You confirmed your sign-in within the last 5 minutes, so one press signs."
        : " A signature needs a sign-in confirmed within the last 5 minutes: the button first sends you to the sign-in service to confirm that it is you (the same person signed in here; anyone else is refused), then brings you back here to finish with one more press."}
    </p>
  );
}

export function ReauthNotice({ notice }: { notice: { tone: "within" | "finding"; message: string } | null }) {
  if (!notice) return null;
  return (
    <p
      role={notice.tone === "finding" ? "alert" : "status"}
      className={`mb-3 rounded-sm border bg-sheet p-3 text-sm ${notice.tone === "finding" ? "border-finding text-finding" : "border-within text-within"}`}
    >
      {notice.message}
    </p>
  );
}
