import { useId, type InputHTMLAttributes, type ReactNode, type SelectHTMLAttributes } from "react";

const control =
  "block w-full rounded border border-paper-300 bg-white px-2.5 py-1.5 text-sm text-paper-900 placeholder:text-paper-500 aria-[invalid=true]:border-fault-700";

interface FieldProps {
  label: string;
  error?: string;
  hint?: ReactNode;
}

export function TextField({ label, error, hint, id, ...props }: FieldProps & InputHTMLAttributes<HTMLInputElement>) {
  const auto = useId();
  const inputId = id ?? auto;
  return (
    <div className="space-y-1">
      <label htmlFor={inputId} className="block text-sm font-medium text-paper-900">
        {label}
      </label>
      <input
        id={inputId}
        aria-invalid={error ? true : undefined}
        aria-describedby={error ? `${inputId}-error` : hint ? `${inputId}-hint` : undefined}
        className={control}
        {...props}
      />
      {hint && !error && (
        <p id={`${inputId}-hint`} className="text-xs text-paper-700">
          {hint}
        </p>
      )}
      {error && (
        <p id={`${inputId}-error`} role="alert" className="text-xs font-medium text-fault-700">
          {error}
        </p>
      )}
    </div>
  );
}

export function SelectField({
  label,
  error,
  id,
  children,
  ...props
}: FieldProps & SelectHTMLAttributes<HTMLSelectElement> & { children: ReactNode }) {
  const auto = useId();
  const selectId = id ?? auto;
  return (
    <div className="space-y-1">
      <label htmlFor={selectId} className="block text-sm font-medium text-paper-900">
        {label}
      </label>
      <select id={selectId} aria-invalid={error ? true : undefined} className={control} {...props}>
        {children}
      </select>
      {error && (
        <p role="alert" className="text-xs font-medium text-fault-700">
          {error}
        </p>
      )}
    </div>
  );
}

/** A form-level message (e.g. "wrong e-mail or password"), announced to screen readers. */
export function FormError({ message }: { message?: string | null }) {
  if (!message) return null;
  return (
    <p role="alert" className="rounded border border-fault-700/30 bg-fault-100 px-3 py-2 text-sm text-fault-700">
      {message}
    </p>
  );
}
