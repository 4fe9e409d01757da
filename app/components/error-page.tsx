import { Link } from "react-router";
import { Caution } from "./caution";
import { Logo } from "./logo";

const COPY: Record<number, { title: string; body: string }> = {
  403: {
    title: "This page is not open to your role",
    body: "Your sign-in worked, but your role on this study does not include this page.",
  },
  404: {
    title: "Nothing here",
    body: "There is no page at this address. The study or record may have been mistyped, or you followed an old link.",
  },
  413: {
    title: "That request was too large",
    body: "Send a smaller request, or use the dataset upload form for large files.",
  },
  500: {
    title: "Plumbline could not finish that request",
    body: "Nothing you saved was lost. Try again in a moment; if it keeps happening, tell your Plumbline administrator the time it happened.",
  },
};

/** The product's error page for 403, 404 and 500 (no stack traces, no SQL). */
export function ErrorPage({ status, detail }: { status: number; detail?: string }) {
  const copy = COPY[status] ?? COPY[500];
  return (
    <main className="mx-auto flex min-h-screen max-w-xl flex-col justify-center gap-4 px-6">
      <Logo />
      <p className="num text-sm font-semibold text-ink-soft">Error {status}</p>
      <h1>{copy.title}</h1>
      <p>{copy.body}</p>
      {detail ? <p className="rounded-sm border border-rule bg-sheet p-3 text-sm">{detail}</p> : null}
      <p>
        <Link to="/">Back to your studies</Link>
      </p>
      <Caution className="mt-8" />
    </main>
  );
}
