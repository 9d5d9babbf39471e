// Tide-gauge station top level.
module tg_top (
    input  logic        clk_sys,
    input  logic        clk_adc,
    input  logic        clk_link,
    input  logic        clk_rtc,
    input  logic        rst_n,
    input  logic        storm_n,
    input  logic        adc_ovr,
    input  logic [11:0] adc_data,
    input  logic        link_rx,
    output logic [7:0]  frame,
    output logic [15:0] sample_count,
    input  logic        log_en,
    input  logic        batt_low,
    output logic [7:0]  minutes,
    output logic [3:0]  strobes,
    output logic        batt_flag
);
  logic [11:0] sample_q;
  logic        sample_tgl, ovr_q, ovr_hi_q, alarm;

  // one reset synchronizer per clock domain: the reset pin is asynchronous to every clock
  logic rst_sys_n, rst_adc_n, rst_rtc_n;
  tg_rst_sync u_rst_sys (.clk(clk_sys), .rst_n(rst_n), .rst_sync_n(rst_sys_n));
  tg_rst_sync u_rst_adc (.clk(clk_adc), .rst_n(rst_n), .rst_sync_n(rst_adc_n));
  tg_rst_sync u_rst_rtc (.clk(clk_rtc), .rst_n(rst_n), .rst_sync_n(rst_rtc_n));

  tg_adc_if u_adc (
      .clk_adc(clk_adc), .rst_n(rst_adc_n), .adc_ovr(adc_ovr), .adc_data(adc_data),
      .sample_q(sample_q), .sample_tgl(sample_tgl), .ovr_q(ovr_q), .ovr_hi_q(ovr_hi_q)
  );
  tg_logger u_log (
      .clk_sys(clk_sys), .rst_n(rst_sys_n), .sample_tgl(sample_tgl), .ovr_q(ovr_q),
      .ovr_hi_q(ovr_hi_q), .storm_n(storm_n), .sample_count(sample_count), .alarm(alarm)
  );
  // BUG (warning): the radio link is reset from the system domain's synchronizer
  tg_link u_link (.clk_link(clk_link), .rst_n(rst_sys_n), .alarm(alarm), .link_rx(link_rx), .frame(frame));
  tg_rtc u_rtc (.clk_rtc(clk_rtc), .rst_n(rst_rtc_n), .minutes(minutes));
  tg_house u_house (
      .clk_rtc(clk_rtc), .clk_sys(clk_sys), .rst_n(rst_sys_n), .rst_rtc_n(rst_rtc_n),
      .log_en(log_en),
      .batt_low(batt_low), .strobes(strobes), .batt_flag(batt_flag)
  );
endmodule
