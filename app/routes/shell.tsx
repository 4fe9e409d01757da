import { Form, NavLink, Outlet } from "react-router";
import type { Route } from "./+types/shell";
import { Caution } from "~/components/caution";
import { Logo } from "~/components/logo";
import { requireUser } from "~/.server/session.server";

export async function loader({ request }: Route.LoaderArgs) {
  const user = await requireUser(request);
  return { user: { displayName: user.displayName, email: user.email, isAdmin: user.isAdmin } };
}

const topLink = ({ isActive }: { isActive: boolean }) =>
  `px-2 py-1 text-sm no-underline hover:no-underline ${isActive ? "font-semibold text-ink" : "text-ink-soft hover:text-ink"}`;

export default function Shell({ loaderData }: Route.ComponentProps) {
  const { user } = loaderData;
  return (
    <div className="flex min-h-screen flex-col">
      <header className="border-b border-rule bg-sheet">
        <div className="mx-auto flex max-w-7xl flex-wrap items-center gap-x-6 gap-y-2 px-6 py-2.5">
          <NavLink to="/" className="no-underline hover:no-underline" aria-label="Plumbline: your studies">
            <Logo />
          </NavLink>
          <nav aria-label="Main" className="flex flex-wrap items-center gap-1">
            <NavLink to="/" end className={topLink}>
              Studies
            </NavLink>
            {user.isAdmin ? (
              <>
                <NavLink to="/admin/studies" className={topLink}>
                  Manage studies
                </NavLink>
                <NavLink to="/admin/people" className={topLink}>
                  People and roles
                </NavLink>
                <NavLink to="/admin/audit" className={topLink}>
                  Audit trail
                </NavLink>
                <NavLink to="/admin/api-clients" className={topLink}>
                  API clients
                </NavLink>
                <NavLink to="/admin/outbox" className={topLink}>
                  E-mail outbox
                </NavLink>
              </>
            ) : null}
          </nav>
          <div className="ml-auto flex items-center gap-3 text-sm">
            <span>
              <NavLink to="/profile" className="font-medium text-ink" title="Your profile and API tokens">
                {user.displayName}
              </NavLink>
              {user.isAdmin ? <span className="ml-1 text-xs text-ink-soft">(administrator)</span> : null}
            </span>
            <Form method="post" action="/sign-out">
              <button type="submit" className="btn-quiet">
                Sign out
              </button>
            </Form>
          </div>
        </div>
      </header>
      <div className="mx-auto w-full max-w-7xl flex-1 px-6 py-6">
        <Outlet />
      </div>
      <footer className="border-t border-rule">
        <div className="mx-auto flex max-w-7xl flex-wrap justify-between gap-2 px-6 py-3">
          <Caution />
          <p className="text-xs text-ink-soft">Plumbline · de-identified data only</p>
        </div>
      </footer>
    </div>
  );
}
