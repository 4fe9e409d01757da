import { redirect } from "react-router";
import type { Route } from "./+types/sign-in";
import { Caution } from "~/components/caution";
import { Logo } from "~/components/logo";
import { signInPage } from "~/.server/auth/sign-in.server";

export function meta(): Route.MetaDescriptors {
  return [{ title: "Sign in · Plumbline" }];
}

export async function loader({ request }: Route.LoaderArgs) {
  const page = await signInPage(request);
  if (page.signedIn) throw redirect("/");
  return page;
}

type Tone = "finding" | "pending" | "within";

/** Status shapes as in DESIGN.md: open triangle (finding), open circle (pending), filled square (within). */
function Shape({ tone }: { tone: Tone }) {
  return (
    <svg width="12" height="12" viewBox="0 0 12 12" aria-hidden="true" className="mt-1 shrink-0">
      {tone === "finding" ? (
        <path d="M6 1.5 11 10.5H1z" fill="none" stroke="#b4442a" strokeWidth="1.5" />
      ) : null}
      {tone === "pending" ? (
        <circle cx="6" cy="6" r="4.5" fill="none" stroke="#5b6478" strokeWidth="1.5" />
      ) : null}
      {tone === "within" ? <rect x="1.5" y="1.5" width="9" height="9" fill="#2e6f5e" /> : null}
    </svg>
  );
}

const BORDER: Record<Tone, string> = {
  finding: "border-l-finding",
  pending: "border-l-pending",
  within: "border-l-within",
};

function Notice({ tone, title, children }: { tone: Tone; title: string; children: React.ReactNode }) {
  return (
    <div
      role={tone === "within" ? "status" : "alert"}
      className={`panel flex gap-2.5 border-l-4 px-3 py-2.5 text-sm ${BORDER[tone]}`}
    >
      <Shape tone={tone} />
      <div>
        <p className="font-semibold">{title}</p>
        <p className="mt-0.5 text-ink-soft">{children}</p>
      </div>
    </div>
  );
}

const SIGNED_OUT: Record<"app" | "idp" | "partial", string> = {
  app: "Your Plumbline session has ended.",
  idp: "Your Plumbline session has ended, and so has your session at the sign-in service.",
  partial:
    "Your Plumbline session has ended. The sign-in service did not confirm that its own session ended; close the browser if others use this computer.",
};

export default function SignIn({ loaderData }: Route.ComponentProps) {
  const { error, idp, returnTo, signedOut } = loaderData;
  return (
    <div className="flex min-h-screen flex-col">
      <main className="mx-auto flex w-full max-w-lg flex-1 flex-col justify-center gap-6 px-6 py-12">
        <Logo />
        <div className="space-y-3">
          <h1>Sign in</h1>
          <p className="text-ink-soft">
            Plumbline checks whether the regression models pre-specified in a study's statistical analysis
            plan still hold up on the locked data: it reruns each planned model, runs every diagnostic check
            the plan commits to, keeps a signed record of each deviation, and exports the appendix for the
            clinical study report.
          </p>
        </div>

        {signedOut && !error ? (
          <Notice tone="within" title="Signed out">
            {SIGNED_OUT[signedOut]}
          </Notice>
        ) : null}

        {error ? (
          <Notice tone="finding" title="Sign-in refused">
            {error.message}
          </Notice>
        ) : null}

        {!idp.answering ? (
          <Notice tone="pending" title="Single sign-on unavailable">
            The sign-in service at {idp.origin} is not answering; single sign-on is unavailable until it is
            back. Try again shortly or tell your administrator.
          </Notice>
        ) : null}

        <div className="panel space-y-3 px-4 py-4">
          <p className="text-sm">Staff of the study team sign in with their organisation's account.</p>
          <div className="flex flex-wrap items-center gap-3">
            {/* A plain form (a full page load): the next stop is the identity provider's own page. */}
            <form method="get" action="/auth/saml/login">
              <input type="hidden" name="returnTo" value={returnTo} />
              <button type="submit" className="btn">
                Sign in with single sign-on
              </button>
            </form>
            {!idp.answering ? (
              <a
                href={`/sign-in${returnTo === "/" ? "" : `?returnTo=${encodeURIComponent(returnTo)}`}`}
                className="btn-quiet no-underline hover:no-underline"
              >
                Check again
              </a>
            ) : null}
          </div>
        </div>
        <div
          className="panel space-y-3 border-l-4 border-l-accent px-4 py-4"
          aria-labelledby="sponsor-sign-in"
        >
          <h2 id="sponsor-sign-in" className="text-base font-semibold">
            Sponsor sign-in
          </h2>
          <p className="text-sm">
            Readers at a sponsor organisation sign in with their own organisation's account to read the
            published reports of the studies shared with it.
          </p>
          <form method="get" action="/auth/oidc/login">
            <input type="hidden" name="returnTo" value={returnTo} />
            <button type="submit" className="btn-quiet">
              Sponsor sign-in
            </button>
          </form>
        </div>
        <p className="text-xs text-ink-soft">
          Signing in opens the studies where an administrator has given you a role, and only those.
        </p>
      </main>
      <footer className="border-t border-rule">
        <div className="mx-auto max-w-lg px-6 py-3">
          <Caution />
        </div>
      </footer>
    </div>
  );
}
