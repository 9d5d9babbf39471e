;;; seam-eglot.el --- Seam (clock-domain crossings) with Eglot  -*- lexical-binding: t; -*-
;; Eglot ships with Emacs 29. Load this file from your init file, then M-x eglot in a
;; Verilog buffer (or add `eglot-ensure' to `verilog-mode-hook').
(require 'eglot)
(add-to-list 'eglot-server-programs
             '((verilog-mode verilog-ts-mode)
               . ("seam" "serve" "--log-level" "warn"
                  :initializationOptions (:inlayHints t))))
;; Optional: start Seam automatically for Verilog and SystemVerilog files.
;; (add-hook 'verilog-mode-hook #'eglot-ensure)
(provide 'seam-eglot)
;;; seam-eglot.el ends here
