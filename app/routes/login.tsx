import { getFormProps, getInputProps, useForm } from "@conform-to/react";
import { parseWithZod } from "@conform-to/zod/v4";
import { data, Form, redirect, useNavigation } from "react-router";
import type { Route } from "./+types/login";
import { getOptionalUser } from "~/auth/guards.server";
import { emailSchema } from "~/auth/schemas";
import { requestSignInCode } from "~/auth/sign-in.server";
import { safeRedirect } from "~/utils/http";
import { readFormCapped } from "~/http/body.server";

export const meta: Route.MetaFunction = () => [{ title: "Sign in — Shotbook" }];

// Public: anyone may ask for a code; a signed-in person goes straight on.
export async function loader({ request }: Route.LoaderArgs) {
  const url = new URL(request.url);
  const redirectTo = safeRedirect(url.searchParams.get("redirectTo"));
  if (await getOptionalUser(request)) throw redirect(redirectTo);
  return { redirectTo, email: url.searchParams.get("email") ?? "" };
}

export async function action({ request, context }: Route.ActionArgs) {
  const submission = parseWithZod(await readFormCapped(request), { schema: emailSchema });
  if (submission.status !== "success") return data({ result: submission.reply() }, { status: 400 });
  const outcome = await requestSignInCode(request, submission.value, context);
  if ("response" in outcome) return outcome.response;
  return data({ result: submission.reply({ formErrors: [outcome.error] }) }, { status: outcome.status });
}

export default function Login({ loaderData, actionData }: Route.ComponentProps) {
  const navigation = useNavigation();
  const busy = navigation.state !== "idle" && navigation.formMethod === "POST";
  const [form, fields] = useForm({
    lastResult: actionData?.result,
    defaultValue: { email: loaderData.email },
    onValidate: ({ formData }) => parseWithZod(formData, { schema: emailSchema }),
    shouldValidate: "onSubmit",
    shouldRevalidate: "onInput",
  });
  return (
    <div className="mx-auto max-w-lg space-y-6">
      <h1 className="text-3xl font-bold">Sign in</h1>
      <p className="text-lg">Enter your e-mail address. We send you a 6-digit code and a sign-in link — no password. Only people an admin has invited can sign in.</p>
      <Form method="post" {...getFormProps(form)} className="card space-y-4">
        <input type="hidden" name="redirectTo" value={loaderData.redirectTo} />
        {form.errors?.length ? (
          <p id={form.errorId} role="alert" className="rounded-md border-2 border-fail p-3 font-bold text-fail">
            <span aria-hidden="true">⚠ </span>
            {form.errors.join(" ")}
          </p>
        ) : null}
        <div>
          <label htmlFor={fields.email.id} className="field-label text-lg">
            E-mail address
          </label>
          <input
            {...getInputProps(fields.email, { type: "email" })}
            key={fields.email.key}
            className="input min-h-14 text-xl"
            autoComplete="email"
            inputMode="email"
            autoCapitalize="none"
            spellCheck={false}
            autoFocus
            placeholder="name@example.com"
          />
          {fields.email.errors ? (
            <p id={fields.email.errorId} className="field-error">
              {fields.email.errors.join(" ")}
            </p>
          ) : null}
        </div>
        <button type="submit" className="btn min-h-14 w-full text-xl" disabled={busy}>
          {busy ? "Sending the code…" : "E-mail me a code"}
        </button>
      </Form>
      <p className="text-muted">A code works once, for 10 minutes. On a field tablet a sign-in lasts the field week, even offline.</p>
    </div>
  );
}
