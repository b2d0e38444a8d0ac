import { getFormProps, getInputProps, useForm } from "@conform-to/react";
import { parseWithZod } from "@conform-to/zod/v4";
import { data, Form, Link, redirect, useNavigation } from "react-router";
import type { Route } from "./+types/login.code";
import { getOptionalUser } from "~/auth/guards.server";
import { codeSchema } from "~/auth/schemas";
import { readTotpState, verifySignInCode } from "~/auth/sign-in.server";
import { safeRedirect } from "~/utils/http";
import { readFormCapped } from "~/http/body.server";

export const meta: Route.MetaFunction = () => [{ title: "Enter your code — Shotbook" }];

// Public: the second step of sign-in. The address comes from this browser's code request.
export async function loader({ request }: Route.LoaderArgs) {
  const url = new URL(request.url);
  const redirectTo = safeRedirect(url.searchParams.get("redirectTo"));
  if (await getOptionalUser(request)) throw redirect(redirectTo);
  const { email, error } = readTotpState(request);
  if (!email && !error) throw redirect(`/login${redirectTo !== "/" ? `?redirectTo=${encodeURIComponent(redirectTo)}` : ""}`);
  return { email, error, redirectTo };
}

export async function action({ request, context }: Route.ActionArgs) {
  const submission = parseWithZod(await readFormCapped(request), { schema: codeSchema });
  if (submission.status !== "success") return data({ result: submission.reply() }, { status: 400 });
  const outcome = await verifySignInCode(request, submission.value, context);
  if ("response" in outcome) return outcome.response;
  return data({ result: submission.reply({ formErrors: [outcome.error] }) }, { status: outcome.status });
}

export default function LoginCode({ loaderData, actionData }: Route.ComponentProps) {
  const navigation = useNavigation();
  const busy = navigation.state !== "idle" && navigation.formMethod === "POST";
  const [form, fields] = useForm({
    lastResult: actionData?.result,
    onValidate: ({ formData }) => parseWithZod(formData, { schema: codeSchema }),
    shouldValidate: "onSubmit",
    shouldRevalidate: "onInput",
  });
  const problem = form.errors?.join(" ") || (actionData ? null : loaderData.error);
  const again = loaderData.redirectTo !== "/" ? `/login?redirectTo=${encodeURIComponent(loaderData.redirectTo)}` : "/login";
  return (
    <div className="mx-auto max-w-lg space-y-6">
      <h1 className="text-3xl font-bold">Enter your code</h1>
      {loaderData.email ? (
        <p className="text-lg">
          If <strong className="break-all">{loaderData.email}</strong> may sign in, a 6-digit code is on its way there. It works once, for 10 minutes. You can also open the link in the e-mail in this
          browser.
        </p>
      ) : null}
      <Form method="post" {...getFormProps(form)} className="card space-y-4">
        <input type="hidden" name="redirectTo" value={loaderData.redirectTo} />
        {problem ? (
          <p id={form.errorId} role="alert" className="rounded-md border-2 border-fail p-3 font-bold text-fail">
            <span aria-hidden="true">⚠ </span>
            {problem}
          </p>
        ) : null}
        <div>
          <label htmlFor={fields.code.id} className="field-label text-lg">
            Code from the e-mail (6 digits)
          </label>
          <input
            {...getInputProps(fields.code, { type: "text" })}
            key={fields.code.key}
            className="input num min-h-16 pl-[calc(0.75rem+0.4em)] text-center text-4xl font-bold tracking-[0.4em]"
            inputMode="numeric"
            autoComplete="one-time-code"
            pattern="[0-9 ]*"
            maxLength={8}
            autoFocus
            placeholder="••••••"
          />
          {fields.code.errors ? (
            <p id={fields.code.errorId} className="field-error">
              {fields.code.errors.join(" ")}
            </p>
          ) : null}
        </div>
        <button type="submit" className="btn min-h-14 w-full text-xl" disabled={busy}>
          {busy ? "Checking…" : "Sign in"}
        </button>
      </Form>
      <div className="flex flex-wrap gap-3">
        {loaderData.email ? (
          <Form method="post" action="/login">
            <input type="hidden" name="email" value={loaderData.email} />
            <input type="hidden" name="redirectTo" value={loaderData.redirectTo} />
            <button type="submit" className="btn-secondary">
              Send a new code
            </button>
          </Form>
        ) : null}
        <Link to={again} className="btn-secondary">
          Use another address
        </Link>
      </div>
      <p className="text-muted">No e-mail after a minute? Look in the spam folder, then send a new code.</p>
    </div>
  );
}
