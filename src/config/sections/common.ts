// Schema pieces every section uses.
import { z } from "zod";

export const id = z
  .string()
  .regex(/^[a-z0-9][a-z0-9_-]*(\.[a-z0-9_-]+)*$/, "expected a lowercase id of letters, digits, - and _, dot-separated");
export const text = z.string().min(1);
export const positive = z.number().positive();
