import type { ButtonHTMLAttributes } from "react";

type Variant = "primary" | "secondary" | "danger" | "ghost";

const styles: Record<Variant, string> = {
  primary: "bg-flux-700 text-white hover:bg-flux-800 disabled:bg-paper-300 disabled:text-paper-700",
  secondary: "border border-paper-300 bg-white text-paper-900 hover:bg-paper-100 disabled:text-paper-500",
  danger: "border border-fault-700/40 bg-white text-fault-700 hover:bg-fault-100 disabled:text-paper-500",
  ghost: "text-paper-700 hover:bg-paper-100 hover:text-paper-900",
};

export function Button({
  variant = "primary",
  busy = false,
  className = "",
  children,
  disabled,
  ...props
}: ButtonHTMLAttributes<HTMLButtonElement> & { variant?: Variant; busy?: boolean }) {
  return (
    <button
      {...props}
      disabled={disabled || busy}
      aria-busy={busy || undefined}
      className={`inline-flex items-center justify-center gap-2 rounded px-3 py-1.5 text-sm font-medium transition-colors disabled:cursor-not-allowed ${styles[variant]} ${className}`}
    >
      {busy && <span aria-hidden className="h-3 w-3 animate-spin rounded-full border-2 border-current border-t-transparent" />}
      {children}
    </button>
  );
}
