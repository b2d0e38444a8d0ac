// The re-shoot request form (issue 12): one schema for the browser (Conform) and the server action.
import { z } from "zod";

export const reshootSchema = z.object({
  intent: z.literal("reshoot"),
  siteId: z.string({ message: "Choose the site where the crew should shoot." }).trim().min(1, "Choose the site where the crew should shoot."),
  projectId: z.string().trim().optional(),
  wanted: z
    .string({ message: "Say what to shoot: targets, range bands, reflectances, light." })
    .trim()
    .min(3, "Say what to shoot: targets, range bands, reflectances, light (at least 3 characters).")
    .max(500, "Keep what is wanted under 500 characters."),
  reason: z
    .string({ message: "Say why the shots are needed, so the crew can judge on site." })
    .trim()
    .min(3, "Say why the shots are needed, so the crew can judge on site (at least 3 characters).")
    .max(500, "Keep the reason under 500 characters."),
});

export type ReshootInput = z.infer<typeof reshootSchema>;

export const reshootStateSchema = z.object({
  intent: z.literal("reshoot-state"),
  requestId: z.string().trim().min(1),
  state: z.enum(["done", "withdrawn"], { message: "Mark the request done or withdraw it." }),
});
