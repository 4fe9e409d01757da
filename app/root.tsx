import {
  isRouteErrorResponse,
  Links,
  Meta,
  Outlet,
  Scripts,
  ScrollRestoration,
  useMatches,
  useNavigation,
  useRouteError,
} from "react-router";
import { Fragment } from "react";
import type { Route } from "./+types/root";
import "./app.css";
import { ErrorPage } from "./components/error-page";
import { useNonce } from "./components/nonce";
import { headStartOf } from "./components/head-start";
import { securityMiddleware } from "./.server/security.server";

export const middleware: Route.MiddlewareFunction[] = [securityMiddleware];

export const links: Route.LinksFunction = () => [
  { rel: "icon", href: "/favicon.svg", type: "image/svg+xml" },
];

export function meta(): Route.MetaDescriptors {
  return [
    { title: "Plumbline" },
    { name: "description", content: "Audit of pre-specified regression models on locked clinical data" },
  ];
}

export function Layout({ children }: { children: React.ReactNode }) {
  const nonce = useNonce();
  const matches = useMatches();
  return (
    <html lang="en">
      <head>
        <meta charSet="utf-8" />
        <meta name="viewport" content="width=device-width, initial-scale=1" />
        {/* before the stylesheet: an inline script after it would wait until the stylesheet arrives */}
        {matches.map((m) => (
          <Fragment key={m.id}>{headStartOf(m.handle, m.data)}</Fragment>
        ))}
        <Meta />
        <Links />
      </head>
      <body>
        {children}
        <ScrollRestoration nonce={nonce} />
        <Scripts nonce={nonce} />
      </body>
    </html>
  );
}

/** A thin bar at the top while a navigation or form submission is under way. */
function PendingBar() {
  const navigation = useNavigation();
  const busy = navigation.state !== "idle";
  return (
    <div aria-hidden={!busy} className="pointer-events-none fixed inset-x-0 top-0 z-50 h-0.5">
      <div
        className={`h-full bg-accent transition-all duration-500 ${busy ? "w-2/3 opacity-100" : "w-full opacity-0"}`}
      />
      {busy ? (
        <span className="sr-only" role="status">
          Loading
        </span>
      ) : null}
    </div>
  );
}

export default function App() {
  return (
    <>
      <PendingBar />
      <Outlet />
    </>
  );
}

export function ErrorBoundary() {
  const error = useRouteError();
  if (isRouteErrorResponse(error)) {
    const detail =
      typeof error.data === "object" && error.data && "message" in error.data
        ? String(error.data.message)
        : undefined;
    return <ErrorPage status={error.status} detail={detail} />;
  }
  return <ErrorPage status={500} />;
}
