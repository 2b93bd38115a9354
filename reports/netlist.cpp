#include "reports/netlist.hpp"

#include <algorithm>
#include <cctype>
#include <cmath>
#include <cstdio>
#include <fmt/format.h>
#include <sstream>
#include <stdexcept>

#include "models/frequency_response.hpp"
#include "models/prbs.hpp"
#include "models/step_response.hpp"
#include "reports/caution.hpp"

namespace peakplan {
namespace {

// The models treat these as absent (NodalSystem::add_resistor); the netlist must agree.
bool resistor_present(double ohms) { return std::isfinite(ohms) && ohms > 0.0; }

class SubcktWriter final : public ElementSink {
 public:
  SubcktWriter(std::ostringstream& out, const StageCircuit* stage = nullptr,
               const std::optional<PairLimit>* limit = nullptr)
      : out_(out), stage_(stage), limit_(limit) {}

  void gm_cell(std::string_view node) override;
  void inner_gm_cell(std::string_view name, std::string_view control, std::string_view node, double gm) override {
    out_ << 'G' << name << ' ' << node << " 0 " << control << " 0 " << spice_number(gm) << '\n';
  }
  void resistor(std::string_view name, std::string_view a, std::string_view b, double r) override {
    if (resistor_present(r)) line(name, a, b, spice_number(r));
  }
  void capacitor(std::string_view name, std::string_view a, std::string_view b, double c) override {
    if (c != 0.0) line(name, a, b, spice_number(c));
  }
  // Returns whether an L element named `name` was written (a K line may refer to it only then).
  bool inductor(std::string_view name_view, std::string_view a, std::string_view b, double l,
                double r_series) override {
    const std::string name(name_view);
    const bool lossy = resistor_present(r_series);
    const std::string mid = lossy ? "x" + name.substr(1) : std::string(b);
    if (l != 0.0) {
      line(name, a, mid, spice_number(l));
    } else if (lossy) {
      // A zero coil is a short in the models; only its loss remains.
      line("R" + name.substr(1) + "short", a, mid, "0");
      return false;
    } else {
      // SPICE has no zero-henry inductor; a zero-volt source is the short the models stamp.
      line("V" + name, a, b, "0");
      return false;
    }
    if (lossy) line("R" + name.substr(1) + "loss", mid, b, spice_number(r_series));
    return true;
  }
  void coupling(std::string_view name, std::string_view l1, std::string_view l2, double k) override {
    char text[32];
    std::snprintf(text, sizeof text, "%.12g", k);
    out_ << name << ' ' << l1 << ' ' << l2 << ' ' << text << '\n';
  }

 private:
  void line(std::string_view name, std::string_view a, std::string_view b, const std::string& value) {
    out_ << name << ' ' << a << ' ' << b << ' ' << value << '\n';
  }
  std::ostringstream& out_;
  const StageCircuit* stage_;
  const std::optional<PairLimit>* limit_;
};

// The gm cell from `in` into `node`: a linear G element, or the pair curve as a B source.
std::string gm_cell_line(const StageCircuit& s, const std::optional<PairLimit>& limit, const std::string& node) {
  if (!limit) return "Gm " + node + " 0 in 0 " + spice_number(s.gm) + "\n";
  // Plain exponents in expressions: no scale suffix to misread.
  auto plain = [](double v) {
    char text[40];
    std::snprintf(text, sizeof text, "%.12g", v);
    return std::string(text);
  };
  const std::string it = plain(limit->tail_current);
  const std::string x = "(" + plain(s.gm) + "*v(in)/" + it + ")";
  if (limit->pair == PairKind::bipolar) return "Bm " + node + " 0 I=" + it + "/2*tanh(2*" + x + ")\n";
  return "Bm " + node + " 0 I=abs" + x + " < 0.7071067812 ? " + it + "*" + x + "*sqrt(max(1-" + x + "*" + x +
         ",0)) : " + it + "/2*sgn" + x + "\n";
}

void SubcktWriter::gm_cell(std::string_view node) {
  if (!stage_ || !limit_) throw std::logic_error("SubcktWriter: a gm cell needs its stage");
  out_ << gm_cell_line(*stage_, *limit_, std::string(node));
}

void check_node_capacitances(const Chain& chain) {
  for (size_t i = 0; i < chain.stages.size(); ++i) {
    const auto& s = chain.stages[i];
    double expected = s.c_load;
    for (int fed : chain.fed_by(static_cast<int>(i)))
      expected += chain.stages[static_cast<size_t>(fed)].c_in;
    const double got = s.circuit.c_node;
    if (std::fabs(got - expected) > 1e-9 * std::max(std::fabs(got), std::fabs(expected)) + 1e-24)
      throw std::logic_error("write_spice_netlist: stage '" + comment_safe(s.id) +
                             "': circuit.c_node = " + spice_number(got) +
                             " is not c_load + c_in of the stages it feeds = " +
                             spice_number(expected) + "; apply fill_node_capacitances first");
  }
}

// Analysis settings need no more digits than a designer would type.
std::string card(double value) { return spice_number(value, 4); }

bool safe_prefix(const std::string& p) {
  if (p.empty()) return false;
  return std::all_of(p.begin(), p.end(), [](unsigned char c) {
    return (c < 0x80 && std::isalnum(c)) || c == '_' || c == '.' || c == '/' || c == '+' || c == '-';
  });
}

// Held symbols as PWL points, each edge a ramp of `rise` centred on its nominal time; SPICE's
// continuation lines keep the card readable.
std::string symbol_pwl(const NetlistOptions::SymbolDrive& d, double rise) {
  std::string text = "0 " + spice_number(d.levels_v.empty() ? 0.0 : d.levels_v.front());
  for (size_t s = 1; s < d.levels_v.size(); ++s) {
    if (d.levels_v[s] == d.levels_v[s - 1]) continue;
    const double t = static_cast<double>(s) * d.ui_s;
    text += "\n+ " + spice_number(t - rise / 2) + " " + spice_number(d.levels_v[s - 1]) + " " +
            spice_number(t + rise / 2) + " " + spice_number(d.levels_v[s]);
  }
  return text;
}

// Held symbols through the models' first-order input edge, as PWL points. Symbol s >= 1 starts
// at first_edge + (s - 1) ui; within it the waveform relaxes towards its level with tau,
// sampled at tau/8 until the symbol ends or it has settled to e^-10 (then held). A 0 -> 1 V
// step is the symbols {0, 1} with its edge at 0 and ui the whole run.
std::string edge_pwl(const std::vector<double>& levels, double ui, double first_edge, double tau) {
  if (levels.empty()) return "0 0";
  const auto [lo, hi] = std::minmax_element(levels.begin(), levels.end());
  const double tolerance = 1e-4 * std::max(*hi - *lo, 1e-30);
  const double h = tau / 8.0, settle = 10.0 * tau;
  double y = levels.front(), last_t = 0.0;
  std::string text = "0 " + spice_number(y);
  int on_line = 1;
  auto point = [&](double t, double v) {  // six points to a continuation line
    text += (on_line++ % 6 == 0 ? "\n+ " : " ") + spice_number(t) + " " + spice_number(v);
    last_t = t;
  };
  for (size_t s = 1; s < levels.size(); ++s) {
    const double t0 = first_edge + static_cast<double>(s - 1) * ui;
    const double target = levels[s];
    if (std::fabs(y - target) <= tolerance) continue;  // settled at this level: the PWL holds
    if (t0 > last_t) point(t0, y);
    const double start = y, span = std::min(ui, settle);
    for (int k = 1; k * h < span - 0.25 * h; ++k) point(t0 + k * h, target + (start - target) * std::exp(-k * h / tau));
    y = target + (start - target) * std::exp(-span / tau);
    point(t0 + span, y);
  }
  return text;
}

struct Analyses {
  double ac_start, ac_stop, tran_step, tran_stop, rise;
  int per_decade;
};

Analyses choose_analyses(const Chain& chain, const NetlistOptions& o) {
  const int main_output = chain.outputs().back();
  const Cascade cascade = output_cascade(chain, main_output);
  double bw = o.bandwidth_hz;
  if (!(bw > 0.0)) bw = frequency_metrics(cascade).bandwidth_hz;
  if (!(bw > 0.0)) {
    // No -3 dB point (a chain with no roll-off in range): centre on its poles instead.
    const auto [lo, hi] = natural_span(cascade, 0.0);
    bw = std::sqrt(lo * hi);
  }
  Analyses a{};
  a.per_decade = o.ac_points_per_decade;
  a.ac_start = std::isnan(o.ac_start_hz) ? bw / 1000.0 : o.ac_start_hz;
  a.ac_stop = std::isnan(o.ac_stop_hz) ? bw * 100.0 : o.ac_stop_hz;
  const TimeAxis axis = choose_time_axis(cascade, bw);
  a.tran_step = std::isnan(o.tran_step_s) ? axis.dt : o.tran_step_s;
  a.tran_stop = std::isnan(o.tran_stop_s) ? axis.dt * (axis.points - 1) : o.tran_stop_s;
  if (o.drive && std::isnan(o.tran_stop_s)) a.tran_stop = o.drive->ui_s * static_cast<double>(o.drive->levels_v.size());
  a.rise = std::isnan(o.step_rise_s) ? a.tran_step / 10.0 : o.step_rise_s;
  if (!(a.ac_start > 0.0 && a.ac_stop > a.ac_start && a.per_decade > 0))
    throw std::invalid_argument("write_spice_netlist: the .ac range needs 0 < start < stop and "
                                "points per decade > 0");
  if (!(a.tran_step > 0.0 && a.tran_stop > a.tran_step && a.rise > 0.0))
    throw std::invalid_argument("write_spice_netlist: the .tran card needs 0 < step < stop and "
                                "a positive step rise time");
  return a;
}

}  // namespace

std::string spice_safe_name(std::string_view text) {
  std::string name;
  for (unsigned char c : text) {
    if (c < 0x80 && std::isalnum(c))
      name += static_cast<char>(std::tolower(c));
    else
      name += '_';
  }
  // Long ids make long lines; the stage index already makes the name unique.
  if (name.size() > 24) name.resize(24);
  return name;
}

std::string spice_number(double value, int digits) {
  if (value == 0.0) return "0";
  if (!std::isfinite(value)) throw std::invalid_argument("spice_number: not a finite value");
  struct Prefix {
    int exponent;
    const char* suffix;
  };
  // SPICE reads "m" as milli and "meg" as mega, whatever the case.
  static constexpr Prefix kPrefixes[] = {{12, "t"}, {9, "g"},   {6, "meg"}, {3, "k"},
                                         {0, ""},   {-3, "m"},  {-6, "u"},  {-9, "n"},
                                         {-12, "p"}, {-15, "f"}};
  const double magnitude = std::fabs(value);
  const Prefix* chosen = &kPrefixes[std::size(kPrefixes) - 1];
  for (const auto& p : kPrefixes) {
    if (magnitude >= std::pow(10.0, p.exponent) * (1.0 - 1e-12)) {
      chosen = &p;
      break;
    }
  }
  char mantissa[40];
  std::snprintf(mantissa, sizeof mantissa, "%.*g", std::clamp(digits, 1, 17),
                value / std::pow(10.0, chosen->exponent));
  return std::string(mantissa) + chosen->suffix;
}

std::string comment_safe(std::string_view text) {
  std::string safe;
  for (unsigned char c : text) {
    if (c == '\\') {
      safe += "\\\\";
    } else if (c >= 0x20 && c < 0x7f) {
      safe += static_cast<char>(c);
    } else {
      char hex[8];
      std::snprintf(hex, sizeof hex, "\\x%02x", c);
      safe += hex;
    }
  }
  return safe;
}

std::string stage_output_node(const Chain& chain, int stage) {
  const auto& s = chain.stages.at(static_cast<size_t>(stage));
  return "n" + std::to_string(stage) + "_" + spice_safe_name(s.id);
}

namespace {

// SPICE always takes the first line as the title, but an unescaped newline would end it.
void write_header(std::ostringstream& out, const Chain& chain) {
  out << "peakplan: " << (chain.name.empty() ? std::string("chain") : comment_safe(chain.name))
      << '\n';
  out << "* " << kPlanningCaution << '\n';
  out << "* Small-signal half circuit of each stage; AC ground = supply = node 0.\n"
         "* Each stage inverts. Node capacitance = c_load + c_in of every stage fed.\n\n";
}

std::string subckt_name(const Chain& chain, size_t i) {
  return "stage" + std::to_string(i) + "_" + spice_safe_name(chain.stages[i].id);
}

// One .subckt per stage, so that each stage's elements read apart from the wiring between them.
void write_stage_subckts(std::ostringstream& out, const Chain& chain) {
  for (size_t i = 0; i < chain.stages.size(); ++i) {
    const auto& s = chain.stages[i];
    out << "* stage " << i << ": id \"" << comment_safe(s.id) << "\"\n";
    out << "* " << load_kind_info(s.circuit.kind).netlist_comment << '\n';
    out << ".subckt " << subckt_name(chain, i) << " in out\n";
    SubcktWriter w(out);
    w.capacitor("Cin", "in", "0", s.c_in);
    if (s.limit)
      out << "* limited: " << to_string(s.limit->pair) << " pair, tail current " << spice_number(s.limit->tail_current)
          << " A\n";
    SubcktWriter load(out, &s.circuit, &s.limit);
    load_kind_info(s.circuit.kind).netlist(s.circuit, load);
    w.capacitor("Cload", "out", "0", s.c_load);
    w.resistor("Rload", "out", "0", s.circuit.r_load);
    out << ".ends\n\n";
  }
}

// The input's .tran waveform: held PRBS symbols, a step through the first-order input edge, or
// a plain step; writes the comment that says which and returns the PULSE/PWL text.
std::string input_waveform(std::ostringstream& out, const NetlistOptions& options, const Analyses& a) {
  std::string pulse = "PULSE(0 1 0 " + card(a.rise) + " " + card(a.rise) + " " +
                      card(4.0 * a.tran_stop) + " " + card(8.0 * a.tran_stop) + ")";
  const bool edged = options.edge_tau_s > 0.0;
  const std::string edge_note =
      edged ? ", each edge first order with tau = " + card(options.edge_tau_s) + "s (input_rise / ln 4)" : "";
  if (options.drive) {
    out << "* source: 1 V AC, and " << options.drive->levels_v.size() << " held symbols of "
        << card(options.drive->ui_s) << "s (half-circuit volts) for .tran" << edge_note << "\n";
    if (!options.drive_description.empty()) out << "* " << options.drive_description << "\n";
    pulse = "PWL(" +
            (edged ? edge_pwl(options.drive->levels_v, options.drive->ui_s, options.drive->ui_s, options.edge_tau_s)
                   : symbol_pwl(*options.drive, a.rise)) +
            ")";
  } else if (edged) {
    out << "* source: 1 V AC, and a 0 -> 1 V step for .tran" << edge_note << "\n";
    pulse = "PWL(" + edge_pwl({0.0, 1.0}, 4.0 * a.tran_stop, 0.0, options.edge_tau_s) + ")";
  } else {
    out << "* source: 1 V AC, and a 0 -> 1 V step for .tran\n";
  }
  return pulse;
}

// The input source carrying `waveform`: a current into a tia, else a voltage behind r_source.
void write_input_source(std::ostringstream& out, const Chain& chain, const std::string& waveform) {
  if (chain.current_input()) {
    // A photocurrent of 1 A (AC and the step) into the tia's input node: the outputs read in ohms.
    out << "* the input is a current: 1 A into node in, so every output reads as a transimpedance\n";
    out << "Iin 0 in DC 0 AC 1 " << waveform << '\n';
    if (chain.photodiode) {
      out << "* photodiode: responsivity " << card(chain.photodiode->responsivity) << " A/W, dark current "
          << card(chain.photodiode->dark_current) << " A (its shot noise is not in a SPICE .noise)\n";
      SubcktWriter(out).capacitor("Cpd", "in", "0", chain.photodiode->capacitance);
    }
  } else {
    const bool through_resistor = resistor_present(chain.r_source);
    out << "Vin " << (through_resistor ? "src" : "in") << " 0 DC 0 AC 1 " << waveform << '\n';
    if (through_resistor) out << "Rsource src in " << spice_number(chain.r_source) << '\n';
  }
  out << '\n';
}

// One instance per stage, wired to its driver's output node, then the output nodes listed.
void write_stage_instances(std::ostringstream& out, const Chain& chain, const std::vector<int>& outputs) {
  for (size_t i = 0; i < chain.stages.size(); ++i) {
    const auto& s = chain.stages[i];
    const std::string in =
        s.driver < 0 ? std::string("in") : stage_output_node(chain, s.driver);
    out << "* stage " << i << " \"" << comment_safe(s.id) << "\"";
    if (s.driver >= 0)
      out << ", driven by stage " << s.driver << " \""
          << comment_safe(chain.stages[static_cast<size_t>(s.driver)].id) << "\"";
    out << '\n';
    out << "X" << i << " " << in << " " << stage_output_node(chain, static_cast<int>(i)) << " "
        << subckt_name(chain, i) << '\n';
  }
  out << "* outputs:";
  for (int o : outputs)
    out << " " << stage_output_node(chain, o) << " (\"" << comment_safe(chain.stages[static_cast<size_t>(o)].id)
        << "\")";
  out << "\n\n";
}

// The arguments of the .ac and .tran cards; the .control block repeats them as commands.
struct AnalysisCards {
  std::string ac, tran;
};

AnalysisCards analysis_cards(const Analyses& a) {
  AnalysisCards cards;
  cards.ac = "dec " + std::to_string(a.per_decade) + " " + card(a.ac_start) + " " + card(a.ac_stop);
  // tmax = tstep: the simulator's own step control would otherwise stride across the rise.
  cards.tran = card(a.tran_step) + " " + card(a.tran_stop) + " 0 " + card(a.tran_step);
  return cards;
}

void write_analyses(std::ostringstream& out, const NetlistOptions& options, const AnalysisCards& cards) {
  if (options.precise)
    out << ".options method=trap reltol=1e-7 vntol=1e-12 abstol=1e-15 chgtol=1e-20\n";
  out << ".ac " << cards.ac << '\n';
  out << ".tran " << cards.tran << '\n';
}

// So that `ngspice -b chain.cir` simulates and prints the main output without editing.
void write_print_lines(std::ostringstream& out, const Chain& chain, const std::vector<int>& outputs) {
  const std::string main_node = stage_output_node(chain, outputs.back());
  out << ".print ac vdb(" << main_node << ") vp(" << main_node << ")\n";
  out << ".print tran v(" << main_node << ")\n";
  // Without an explicit .save, ngspice's batch mode keeps only what each .print names for
  // its own analysis and refuses the other ("no data saved").
  out << ".save v(" << main_node << ")\n";
}

// A .control block that runs dc, ac and tran and writes every output to <prefix>.<analysis>.txt.
void write_batch_control(std::ostringstream& out, const Chain& chain, const std::vector<int>& outputs,
                         const std::string& prefix, const AnalysisCards& cards) {
  std::string vectors;
  for (int o : outputs) vectors += " v(" + stage_output_node(chain, o) + ")";
  out << "\n.control\n"
         "set wr_singlescale\n"
         "set wr_vecnames\n"
         "set numdgt=15\n"
      // dc first: ngspice-39 gives a stale DC sweep with coupled inductors after a tran.
      << (chain.current_input() ? "dc Iin 1 1 1\n" : "dc Vin 1 1 1\n")
      << "wrdata " << prefix << ".dc.txt" << vectors << '\n'
      << "ac " << cards.ac << '\n'
      << "wrdata " << prefix << ".ac.txt" << vectors << '\n'
      << "tran " << cards.tran << '\n'
      << "wrdata " << prefix << ".tran.txt" << vectors << '\n'
      << "quit\n"
         ".endc\n";
}

}  // namespace

std::string write_spice_netlist(const Chain& chain, const NetlistOptions& options) {
  if (chain.stages.empty()) throw std::invalid_argument("write_spice_netlist: the chain has no stages");
  if (options.batch_control && !safe_prefix(options.data_prefix))
    throw std::invalid_argument("write_spice_netlist: data_prefix '" +
                                comment_safe(options.data_prefix) +
                                "' must be letters, digits and _ . / + - only");
  check_node_capacitances(chain);
  const Analyses a = choose_analyses(chain, options);
  const std::vector<int> outputs = chain.outputs();

  std::ostringstream out;
  write_header(out, chain);
  write_stage_subckts(out, chain);
  const std::string waveform = input_waveform(out, options, a);  // its comment precedes the source
  write_input_source(out, chain, waveform);
  write_stage_instances(out, chain, outputs);
  const AnalysisCards cards = analysis_cards(a);
  write_analyses(out, options, cards);
  // The batch block writes data files instead of printing: the two are alternatives.
  if (options.batch_control)
    write_batch_control(out, chain, outputs, options.data_prefix, cards);
  else
    write_print_lines(out, chain, outputs);
  out << ".end\n";
  return out.str();
}

double netlist_edge_tau(const Signal& signal) {
  return signal.input_rise > 0.0 ? signal.input_rise / std::log(4.0) : 0.0;
}

NetlistOptions prbs_netlist_drive(const Signal& signal, size_t max_symbols) {
  if (!(signal.bit_rate > 0.0) || !(signal.swing > 0.0))
    throw std::invalid_argument("prbs_netlist_drive: the signal needs a positive bit rate and swing");
  const bool pam4 = signal.modulation == Modulation::pam4;
  const size_t period = static_cast<size_t>(std::min<std::uint64_t>(prbs_period(signal.pattern), max_symbols));
  const auto bits = prbs_bits(signal.pattern, pam4 ? 2 * period : period);
  auto levels = pam4 ? pam4_levels(bits) : nrz_levels(bits);  // 0..1
  for (double& v : levels) v = (v - 0.5) * signal.swing / 2.0;
  NetlistOptions options;
  options.drive = NetlistOptions::SymbolDrive{signal.ui(), std::move(levels)};
  options.edge_tau_s = netlist_edge_tau(signal);
  const bool whole = prbs_period(signal.pattern) <= max_symbols;
  options.drive_description =
      fmt::format("{} {} at {} b/s: {} symbols ({}), half-circuit levels +-{} V for a {} V differential swing",
                  to_string(signal.pattern), pam4 ? "PAM4" : "NRZ", spice_number(signal.bit_rate, 6),
                  options.drive->levels_v.size(), whole ? "one period" : "the first of a longer period",
                  spice_number(signal.swing / 4.0, 4), spice_number(signal.swing, 4));
  return options;
}

}  // namespace peakplan
