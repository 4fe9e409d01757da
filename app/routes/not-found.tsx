import { data } from "react-router";
import { ErrorPage } from "~/components/error-page";

export function loader() {
  throw data({ message: "There is no page at this address." }, { status: 404 });
}

export function meta() {
  return [{ title: "Not found · Plumbline" }];
}

export default function NotFound() {
  return <ErrorPage status={404} />;
}
