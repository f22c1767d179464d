// Test-only: lets the static libserialport open a pseudo-terminal. PTYs reject the
// modem-line ioctls (TIOCMGET/TIOCMSET/TIOCMBIS/TIOCMBIC) with ENOTTY, and libserialport
// calls TIOCMGET on every configuration change. Linked with -Wl,--wrap=ioctl into
// rb_serial_tests only; it forwards every call and emulates the modem lines only when
// the real call fails on a PTY slave. Never part of the program.
#include <errno.h>
#include <sys/ioctl.h>
#include <sys/stat.h>
#include <sys/sysmacros.h>

#include <cstdarg>

extern "C" int __real_ioctl(int fd, unsigned long req, ...);

namespace {
int g_modem_bits = TIOCM_DTR | TIOCM_RTS | TIOCM_CTS | TIOCM_DSR | TIOCM_CAR;
bool IsPtySlave(int fd) {
  struct stat st {};
  return fstat(fd, &st) == 0 && S_ISCHR(st.st_mode) && major(st.st_rdev) >= 136 && major(st.st_rdev) <= 143;
}
}  // namespace

extern "C" int __wrap_ioctl(int fd, unsigned long req, ...) {
  va_list ap;
  va_start(ap, req);
  void* arg = va_arg(ap, void*);
  va_end(ap);
  const int rc = __real_ioctl(fd, req, arg);
  if (rc == 0 || (errno != ENOTTY && errno != EINVAL) || !IsPtySlave(fd)) return rc;
  int* bits = static_cast<int*>(arg);
  switch (req) {
    case TIOCMGET: *bits = g_modem_bits; return 0;
    case TIOCMSET: g_modem_bits = *bits; return 0;
    case TIOCMBIS: g_modem_bits |= *bits; return 0;
    case TIOCMBIC: g_modem_bits &= ~*bits; return 0;
  }
  return rc;
}
