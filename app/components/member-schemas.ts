// The membership forms' zod schemas (issue 14), shared by the admin pages (client and server,
// through Conform). Pure: no server imports, so the browser bundle may load it.
import { z } from "zod";
import { inviteSchema } from "~/auth/schemas";

const email = z
  .string({ error: "Enter the e-mail address of the person to add." })
  .trim()
  .min(1, "Enter the e-mail address of the person to add.")
  .max(254, "That address is too long.")
  .pipe(z.email("That does not look like an e-mail address: check it for typing errors."));

/** Project page: add a person who already has a sign-in. */
export const addMemberSchema = z.object({ intent: z.literal("add-member"), email });

/** Project page: a new person, invited as the users page does, straight into this project. */
export const inviteMemberSchema = inviteSchema.extend({ intent: z.literal("invite-member") });

/** User page: add the user to one more project. */
export const joinProjectSchema = z.object({
  intent: z.literal("join-project"),
  projectId: z.string({ error: "Pick a project." }).trim().min(1, "Pick a project."),
});
