// Bytes of the partials of the fit over partitions (weft/merge.hpp).
//
// Layout (little-endian as the machine writes it; a reader on another byte order
// refuses the magic): "WEFTPART", u32 format version, u32 kind (1 sums, 2 scores),
// u64 payload size, the payload, u64 FNV-1a (64-bit) of everything before it. long
// double values are written as two doubles (the value rounded, and the rest), so the
// bytes are the same on every x86-64 and aarch64 build.
#include <cstring>
#include <string>

#include "weft/error.hpp"
#include "weft/merge.hpp"

namespace weft {

using Eigen::Index;

namespace {

constexpr char kMagic[8] = {'W', 'E', 'F', 'T', 'P', 'A', 'R', 'T'};
constexpr std::uint32_t kFormatVersion = 2;  // 2: the weights (spec, label, zero-weight rows, weight sum, change squares)
constexpr std::size_t kHeader = 8 + 4 + 4 + 8;

std::uint64_t fnv1a(const std::uint8_t* p, std::size_t n) {
    std::uint64_t h = 14695981039346656037ULL;
    for (std::size_t i = 0; i < n; ++i) {
        h ^= p[i];
        h *= 1099511628211ULL;
    }
    return h;
}

class Writer {
public:
    template <typename T>
    void raw(T v) {
        const std::size_t at = out.size();
        out.resize(at + sizeof v);
        std::memcpy(out.data() + at, &v, sizeof v);
    }
    void u64(std::uint64_t v) { raw(v); }
    void f64(double v) { raw(v); }
    void ld(long double v) {
        const double hi = static_cast<double>(v);
        f64(hi);
        f64(static_cast<double>(v - hi));
    }
    void text(const std::string& s) {
        u64(s.size());
        out.insert(out.end(), s.begin(), s.end());
    }
    void texts(const std::vector<std::string>& v) {
        u64(v.size());
        for (const std::string& s : v) text(s);
    }
    template <typename T>
    void numbers(const std::vector<T>& v) {
        u64(v.size());
        for (T x : v) {
            if constexpr (std::is_same_v<T, long double>) ld(x);
            else if constexpr (std::is_same_v<T, double>) f64(x);
            else u64(static_cast<std::uint64_t>(x));
        }
    }
    void matrix(const Eigen::MatrixXd& m) {
        u64(static_cast<std::uint64_t>(m.rows()));
        u64(static_cast<std::uint64_t>(m.cols()));
        for (Index j = 0; j < m.cols(); ++j)
            for (Index i = 0; i < m.rows(); ++i) f64(m(i, j));
    }
    void moments(const Comoments& c) {
        f64(c.n);
        for (long double v : {c.mean_a, c.mean_b, c.caa, c.cbb, c.cab}) ld(v);
    }
    std::vector<std::uint8_t> out;
};

class Reader {
public:
    Reader(const std::uint8_t* p, std::size_t n) : p_(p), n_(n) {}
    template <typename T>
    T raw() {
        need(sizeof(T));
        T v;
        std::memcpy(&v, p_ + at_, sizeof v);
        at_ += sizeof v;
        return v;
    }
    std::uint64_t u64() { return raw<std::uint64_t>(); }
    double f64() { return raw<double>(); }
    long double ld() {
        const long double hi = f64();
        return hi + static_cast<long double>(f64());
    }
    std::size_t count(std::size_t element) {
        const std::uint64_t n = u64();
        if (element > 0 && n > (n_ - at_) / element) bad();
        return static_cast<std::size_t>(n);
    }
    std::string text() {
        const std::size_t n = count(1);
        std::string s(reinterpret_cast<const char*>(p_ + at_), n);
        at_ += n;
        return s;
    }
    std::vector<std::string> texts() {
        std::vector<std::string> v(count(8));
        for (std::string& s : v) s = text();
        return v;
    }
    template <typename T>
    std::vector<T> numbers() {
        std::vector<T> v(count(8));
        for (T& x : v) {
            if constexpr (std::is_same_v<T, long double>) x = ld();
            else if constexpr (std::is_same_v<T, double>) x = f64();
            else x = static_cast<T>(u64());
        }
        return v;
    }
    Eigen::MatrixXd matrix() {
        const std::size_t rows = count(0), cols = count(0);
        // each dimension bounded by what the rest can hold, so that even an empty
        // matrix of absurd width is refused before any loop runs over it
        const std::size_t room = (n_ - at_) / 8 + 1;
        if (rows > room || cols > room || (cols > 0 && rows > (n_ - at_) / 8 / cols)) bad();
        Eigen::MatrixXd m(static_cast<Index>(rows), static_cast<Index>(cols));
        for (Index j = 0; j < m.cols(); ++j)
            for (Index i = 0; i < m.rows(); ++i) m(i, j) = f64();
        return m;
    }
    Comoments moments() {
        Comoments c;
        c.n = f64();
        c.mean_a = ld();
        c.mean_b = ld();
        c.caa = ld();
        c.cbb = ld();
        c.cab = ld();
        return c;
    }
    void finish() const {
        if (at_ != n_) bad();
    }
    [[noreturn]] static void bad() {
        throw Error("the partial's bytes do not hold what their header says (damaged); send them unchanged");
    }

private:
    void need(std::size_t k) const {
        if (k > n_ - at_) bad();
    }
    const std::uint8_t* p_;
    std::size_t n_;
    std::size_t at_ = 0;
};

std::vector<std::uint8_t> seal(std::uint32_t kind, const std::vector<std::uint8_t>& payload) {
    Writer w;
    w.out.insert(w.out.end(), kMagic, kMagic + 8);
    w.raw(kFormatVersion);
    w.raw(kind);
    w.u64(payload.size());
    w.out.insert(w.out.end(), payload.begin(), payload.end());
    w.u64(fnv1a(w.out.data(), w.out.size()));
    return std::move(w.out);
}

// The payload of a checked buffer of the given kind (0: any).
Reader open(const std::uint8_t* bytes, std::size_t size, std::uint32_t want, std::uint32_t& kind) {
    if (bytes == nullptr || size < kHeader + 8 || std::memcmp(bytes, kMagic, 8) != 0)
        throw Error("these bytes are not a weft partial (no WEFTPART header); pass what weft_partial_bytes wrote");
    std::uint32_t version = 0;
    std::memcpy(&version, bytes + 8, 4);
    std::memcpy(&kind, bytes + 12, 4);
    if (version != kFormatVersion)
        throw Error("the partial has format version " + std::to_string(version) + " but this libweft reads version " +
                    std::to_string(kFormatVersion) + "; make every partial with the same libweft");
    std::uint64_t payload = 0, check = 0;
    std::memcpy(&payload, bytes + 16, 8);
    if (payload != size - kHeader - 8)
        throw Error("the partial's bytes are " + std::to_string(size) + " long but their header says " +
                    std::to_string(payload + kHeader + 8) + " (truncated or joined); send them unchanged");
    std::memcpy(&check, bytes + size - 8, 8);
    if (check != fnv1a(bytes, size - 8))
        throw Error("the partial's check sum does not match its contents (damaged in transit or storage); make it "
                    "again");
    if (kind != 1 && kind != 2) Reader::bad();
    if (want != 0 && kind != want)
        throw Error(std::string("the bytes hold a partial of ") + (kind == 1 ? "pass 1 (sums)" : "pass 2 (scores)") +
                    " where one of " + (want == 1 ? "pass 1 (sums)" : "pass 2 (scores)") + " is needed");
    return Reader(bytes + kHeader, static_cast<std::size_t>(payload));
}

}  // namespace

std::vector<std::uint8_t> to_bytes(const PartialSums& s) {
    Writer w;
    w.u64(static_cast<std::uint64_t>(s.spec.estimator));
    w.u64(static_cast<std::uint64_t>(s.spec.covariance));
    w.u64(static_cast<std::uint64_t>(static_cast<std::int64_t>(s.spec.dk_lag)));
    w.u64(s.spec.period_effects ? 1 : 0);
    w.u64(s.spec.intercept ? 1 : 0);
    w.f64(s.spec.level);
    w.text(s.spec.weights);
    w.text(s.weight_label);
    w.numbers(s.grid);
    w.texts(s.regressor_names);
    w.texts(s.candidates);
    w.u64(static_cast<std::uint64_t>(static_cast<std::int64_t>(s.intercept_column)));
    for (std::uint64_t v : {s.rows_input, s.rows_used, s.units_used, s.units_in_equation, s.pairs_lost, s.n,
                            s.rows_zero_weight})
        w.u64(v);
    w.ld(s.weight_sum);
    w.numbers(s.period_used);
    w.numbers(s.period_rows);
    w.numbers(s.raw_squares);
    w.numbers(s.level_squares);
    w.numbers(s.change_squares);
    w.numbers(std::vector<double>(s.shift.data(), s.shift.data() + s.shift.size()));
    w.matrix(s.r);
    w.ld(s.y_sum);
    w.ld(s.y_raw);
    w.moments(s.y_moments);
    return seal(1, w.out);
}

std::vector<std::uint8_t> to_bytes(const PartialScores& s) {
    Writer w;
    w.u64(s.n);
    w.ld(s.ssr);
    w.numbers(s.gradient);
    w.numbers(s.gram);
    w.matrix(s.meat_rows);
    w.matrix(s.meat_units);
    w.u64(s.units);
    w.matrix(s.period_sums);
    w.numbers(s.period_present);
    w.moments(s.level_rows);
    w.moments(s.level_means);
    return seal(2, w.out);
}

int partial_kind(const std::uint8_t* bytes, std::size_t size) {
    std::uint32_t kind = 0;
    open(bytes, size, 0, kind);
    return static_cast<int>(kind);
}

PartialSums sums_from_bytes(const std::uint8_t* bytes, std::size_t size) {
    std::uint32_t kind = 0;
    Reader r = open(bytes, size, 1, kind);
    PartialSums s;
    const std::uint64_t estimator = r.u64(), covariance = r.u64();
    if (estimator > static_cast<std::uint64_t>(Estimator::random) ||
        covariance > static_cast<std::uint64_t>(Covariance::cr2))
        Reader::bad();
    s.spec.estimator = static_cast<Estimator>(estimator);
    s.spec.covariance = static_cast<Covariance>(covariance);
    s.spec.dk_lag = static_cast<int>(static_cast<std::int64_t>(r.u64()));
    s.spec.period_effects = r.u64() != 0;
    s.spec.intercept = r.u64() != 0;
    s.spec.level = r.f64();
    s.spec.weights = r.text();
    s.weight_label = r.text();
    s.grid = r.numbers<double>();
    s.regressor_names = r.texts();
    s.candidates = r.texts();
    s.intercept_column = static_cast<int>(static_cast<std::int64_t>(r.u64()));
    for (std::uint64_t* v : {&s.rows_input, &s.rows_used, &s.units_used, &s.units_in_equation, &s.pairs_lost, &s.n,
                             &s.rows_zero_weight})
        *v = r.u64();
    s.weight_sum = r.ld();
    s.period_used = r.numbers<std::uint8_t>();
    s.period_rows = r.numbers<std::uint64_t>();
    s.raw_squares = r.numbers<long double>();
    s.level_squares = r.numbers<long double>();
    s.change_squares = r.numbers<long double>();
    const std::vector<double> shift = r.numbers<double>();
    s.shift = Eigen::Map<const Eigen::VectorXd>(shift.data(), static_cast<Index>(shift.size()));
    s.r = r.matrix();
    s.y_sum = r.ld();
    s.y_raw = r.ld();
    s.y_moments = r.moments();
    r.finish();
    const std::size_t p = s.candidates.size();
    const std::size_t expected = (s.intercept_column == 0 ? 1 : 0) + s.regressor_names.size() +
                                 (s.spec.period_effects ? s.grid.size() : 0);
    if (s.intercept_column < -1 || s.intercept_column > 0 || p != expected || s.spec.dk_lag < -1 ||
        !(s.spec.level > 0 && s.spec.level < 1) ||
        s.level_squares.size() != s.regressor_names.size() || s.change_squares.size() != s.regressor_names.size() ||
        (!s.spec.weights.empty() && s.weight_label.empty()) ||
        s.period_used.size() != s.grid.size() || s.period_rows.size() != s.grid.size() ||
        s.raw_squares.size() != p || static_cast<std::size_t>(s.shift.size()) != p + 1 ||
        static_cast<std::size_t>(s.r.rows()) != p + 1 || static_cast<std::size_t>(s.r.cols()) != p + 1)
        Reader::bad();
    return s;
}

PartialScores scores_from_bytes(const std::uint8_t* bytes, std::size_t size) {
    std::uint32_t kind = 0;
    Reader r = open(bytes, size, 2, kind);
    PartialScores s;
    s.n = r.u64();
    s.ssr = r.ld();
    s.gradient = r.numbers<long double>();
    s.gram = r.numbers<long double>();
    s.meat_rows = r.matrix();
    s.meat_units = r.matrix();
    s.units = r.u64();
    s.period_sums = r.matrix();
    s.period_present = r.numbers<std::uint8_t>();
    s.level_rows = r.moments();
    s.level_means = r.moments();
    r.finish();
    const Index K = static_cast<Index>(s.gradient.size());
    if (s.gram.size() != s.gradient.size() * s.gradient.size() || s.meat_rows.rows() != K ||
        s.meat_rows.cols() != K || s.meat_units.cols() != K ||
        (s.period_sums.rows() > 0 && static_cast<std::size_t>(s.period_sums.rows()) != s.period_present.size()) || s.meat_units.rows() != K || (s.period_sums.rows() > 0 && s.period_sums.cols() != K))
        Reader::bad();
    return s;
}

}  // namespace weft
