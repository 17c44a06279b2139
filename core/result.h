#pragma once
// Result<T>: the value of an operation that can fail for an expected reason
// (bad input, a design that cannot be fitted), or the Problem saying why.
// Programmer errors are asserts, not Problems.

#include <cassert>
#include <string>
#include <utility>
#include <variant>

namespace furrow {

// A plain-words description of an expected failure. `column` and `record`
// locate it in the input when it concerns one cell: `record` is the 0-based
// index of the data record (the caller maps it to a file line), -1 if the
// problem is not tied to one record; `column` is empty when not tied to one.
struct Problem {
  std::string message;
  std::string column;
  int record = -1;
};

template <class T>
class Result {
 public:
  Result(T value) : state_(std::move(value)) {}                // NOLINT: implicit by design
  Result(Problem problem) : state_(std::move(problem)) {}      // NOLINT

  bool ok() const { return std::holds_alternative<T>(state_); }
  explicit operator bool() const { return ok(); }

  // Precondition: ok().
  const T& value() const& { assert(ok()); return std::get<T>(state_); }
  T& value() & { assert(ok()); return std::get<T>(state_); }
  T&& value() && { assert(ok()); return std::get<T>(std::move(state_)); }
  const T* operator->() const { return &value(); }
  T* operator->() { return &value(); }
  const T& operator*() const& { return value(); }
  T& operator*() & { return value(); }

  // Precondition: !ok().
  const Problem& problem() const { assert(!ok()); return std::get<Problem>(state_); }

 private:
  std::variant<T, Problem> state_;
};

inline Problem make_problem(std::string message, std::string column = {}, int record = -1) {
  return Problem{std::move(message), std::move(column), record};
}

}  // namespace furrow

namespace furrow {
// The outcome of an operation that returns nothing but can fail.
struct Done {};
using Status = Result<Done>;
inline Status ok_status() { return Done{}; }
}  // namespace furrow
